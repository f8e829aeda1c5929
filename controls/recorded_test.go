package controls

import (
	"errors"
	"github.com/halovet/halovet/terms"
	"strings"
	"testing"

	"github.com/halovet/halovet/substances"
)

func seedCatalogue(t *testing.T) *substances.Catalogue {
	t.Helper()
	subs, blends, err := substances.Seed()
	if err != nil {
		t.Fatal(err)
	}
	cat, err := substances.NewCatalogue(subs, blends)
	if err != nil {
		t.Fatal(err)
	}
	return cat
}

// TestClassifyShipment: which flow a shipment total lands in. Every row names the rule it
// checks.
func TestClassifyShipment(t *testing.T) {
	m := num("2.5")
	cases := []struct {
		name string
		t    ShipmentTotal
		g    substances.Group
		want Flows
		note string // substring of the note; "" means no note
	}{
		// Art. 1 para 5: transit is not import or export; never counted.
		{"transit", ShipmentTotal{Year: 2020, Direction: terms.DirectionTransit, Purpose: terms.PurposeFeedstock}, substances.GroupCI, Flows{Transit: m}, ""},
		// Decision IV/24: used, recycled and reclaimed imports are not counted.
		{"used import", ShipmentTotal{Year: 2020, Direction: terms.DirectionImport, Condition: terms.ConditionUsed}, substances.GroupCI, Flows{UsedImports: m}, ""},
		{"reclaimed import for feedstock", ShipmentTotal{Year: 2020, Direction: terms.DirectionImport, Condition: terms.ConditionReclaimed, Purpose: terms.PurposeFeedstock}, substances.GroupCI, Flows{UsedImports: m}, ""},
		// Art. 1 para 5: imports count in consumption.
		{"virgin import", ShipmentTotal{Year: 2020, Direction: terms.DirectionImport, Condition: terms.ConditionVirgin, Purpose: terms.PurposeServicing}, substances.GroupCI, Flows{Imports: m}, ""},
		// Art. 1 para 5; Decision VII/30: feedstock is deducted.
		{"feedstock import", ShipmentTotal{Year: 2020, Direction: terms.DirectionImport, Purpose: terms.PurposeFeedstock}, substances.GroupBII, Flows{Imports: m, Feedstock: m}, ""},
		// Decision X/14 (process agents), deducted with feedstock by the Secretariat's formula: from memory.
		{"process agent", ShipmentTotal{Year: 2020, Direction: terms.DirectionImport, Purpose: terms.PurposeProcessAgent, Designation: "carbon tetrachloride"}, substances.GroupBII, Flows{Imports: m, Feedstock: m}, "Decision X/14"},
		// Art. 1 para 5: destruction by an approved technology is deducted.
		{"destruction import", ShipmentTotal{Year: 2020, Direction: terms.DirectionImport, Purpose: terms.PurposeDestruction}, substances.GroupAI, Flows{Imports: m, Destruction: m}, ""},
		// Art. 2H para 6: the QPS exclusion is methyl bromide's (Annex E) only.
		{"qps methyl bromide", ShipmentTotal{Year: 2020, Direction: terms.DirectionImport, Purpose: terms.PurposeQPS}, substances.GroupEI, Flows{Imports: m, QPS: m}, ""},
		{"qps other", ShipmentTotal{Year: 2020, Direction: terms.DirectionImport, Purpose: terms.PurposeQPS, Designation: "HCFC-22"}, substances.GroupCI, Flows{Imports: m}, "QPS exclusion covers methyl bromide only"},
		// Decision IV/24: used exports are not counted.
		{"used export", ShipmentTotal{Year: 2020, Direction: terms.DirectionExport, Condition: terms.ConditionRecycled, PartnerNonParty: true}, substances.GroupCI, Flows{UsedExports: m}, ""},
		// Art. 3 para 1(c): exports to non-Parties are not deducted from 1993.
		{"export to non-Party 1993", ShipmentTotal{Year: 1993, Direction: terms.DirectionExport, PartnerNonParty: true}, substances.GroupAI, Flows{ExportsNonParty: m}, ""},
		{"export to non-Party 1992", ShipmentTotal{Year: 1992, Direction: terms.DirectionExport, PartnerNonParty: true}, substances.GroupAI, Flows{Exports: m}, ""},
		// Art. 1 para 5; Decision VII/30: exports to Parties are deducted, feedstock exports included.
		{"re-export for feedstock", ShipmentTotal{Year: 2020, Direction: terms.DirectionReExport, Purpose: terms.PurposeFeedstock}, substances.GroupCI, Flows{Exports: m}, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			c.t.Tonnes = m
			f, note, err := ClassifyShipment(c.t, c.g)
			if err != nil {
				t.Fatal(err)
			}
			if f != c.want {
				t.Errorf("flows %+v, want %+v", f, c.want)
			}
			if (c.note == "") != (note == "") || !strings.Contains(note, c.note) {
				t.Errorf("note %q, want one containing %q", note, c.note)
			}
		})
	}
	if _, _, err := ClassifyShipment(ShipmentTotal{Direction: terms.Direction(99)}, substances.GroupCI); !errors.Is(err, ErrStoredData) {
		t.Errorf("unknown direction: %v, want ErrStoredData", err)
	}
}

// TestClassifyEntry: national entry kinds (Art. 1 para 5 for production, destruction and
// feedstock; Art. 2H para 6 for QPS; Art. 3 para 1(c) for non-Party exports from 1993).
func TestClassifyEntry(t *testing.T) {
	m := num("4")
	cases := []struct {
		kind string
		year int
		want Flows
	}{
		{EntryProduction, 2020, Flows{Production: m}},
		{EntryDestruction, 2020, Flows{Destruction: m}},
		{EntryFeedstock, 2020, Flows{Feedstock: m}},
		{EntryQPS, 2020, Flows{QPS: m}},
		{EntryHistoricalImport, 1990, Flows{Imports: m}},
		{EntryHistoricalExport, 1990, Flows{Exports: m}},
		{EntryHistoricalExportNonParty, 1992, Flows{Exports: m}},
		{EntryHistoricalExportNonParty, 1993, Flows{ExportsNonParty: m}},
	}
	for _, c := range cases {
		f, err := ClassifyEntry(NationalTotal{Year: c.year, Kind: c.kind, Tonnes: m})
		if err != nil || f != c.want {
			t.Errorf("%s %d: %+v, %v; want %+v", c.kind, c.year, f, err, c.want)
		}
	}
	if _, err := ClassifyEntry(NationalTotal{Kind: "stockpile"}); !errors.Is(err, ErrStoredData) {
		t.Errorf("unknown kind: %v, want ErrStoredData", err)
	}
}

// TestClassifyRecordedOneSourcePerUse: an unmarked national feedstock entry of a substance
// and year whose shipments declare feedstock is left out with a note; one marked outside
// customs adds (Art. 1 para 5: each quantity deducted once; common practice for the mark).
func TestClassifyRecordedOneSourcePerUse(t *testing.T) {
	cat := seedCatalogue(t)
	ships := []ShipmentTotal{{Year: 2021, Designation: "carbon tetrachloride", AnnexGroup: "B/II", Direction: terms.DirectionImport, Purpose: terms.PurposeFeedstock, Tonnes: num("10")}}
	nats := []NationalTotal{
		{Year: 2021, Kind: EntryFeedstock, Substance: "carbon tetrachloride", Tonnes: num("10"), Keys: []string{"FS-1"}},
		{Year: 2021, Kind: EntryFeedstock, Substance: "carbon tetrachloride", Tonnes: num("3"), OutsideCustoms: true, Keys: []string{"FS-2"}},
	}
	d, err := ClassifyRecorded(cat, []int{2021}, ships, nats, []int{2021})
	if err != nil {
		t.Fatal(err)
	}
	if len(d.Records) != 2 {
		t.Fatalf("%d records, want 2 (the shipment and the outside-customs entry): %+v", len(d.Records), d.Records)
	}
	total := d.Records[0].Flows.Add(d.Records[1].Flows)
	// 10 t imported, 10 t feedstock from the shipment, 3 t more outside customs.
	if !total.Imports.Equal(num("10")) || !total.Feedstock.Equal(num("13")) {
		t.Errorf("flows %+v, want imports 10 and feedstock 13", total)
	}
	if len(d.Notes) != 1 || !strings.Contains(d.Notes[0], "FS-1") || !strings.Contains(d.Notes[0], "left out") {
		t.Errorf("notes %q, want one naming FS-1 as left out", d.Notes)
	}
	if !d.Covered[2021] || !d.AnyYears[2021] {
		t.Errorf("coverage %v, any %v; want 2021 in both", d.Covered, d.AnyYears)
	}
}

func TestClassifyRecordedStoredDataErrors(t *testing.T) {
	cat := seedCatalogue(t)
	cases := []struct {
		name  string
		ships []ShipmentTotal
		nats  []NationalTotal
		want  string
	}{
		{"uncatalogued controlled component", []ShipmentTotal{{Year: 2021, Designation: "HCFC-9999", AnnexGroup: "C/I", Direction: terms.DirectionImport, Tonnes: num("1")}}, nil, "catalogue has no such substance"},
		{"uncatalogued entry", nil, []NationalTotal{{Year: 2021, Kind: EntryProduction, Substance: "HCFC-9999", Tonnes: num("1")}}, "catalogue has no such substance"},
		// Art. 2H para 6: QPS is methyl bromide's.
		{"QPS entry of HCFC-22", nil, []NationalTotal{{Year: 2021, Kind: EntryQPS, Substance: "HCFC-22", Tonnes: num("1")}}, "QPS applies to methyl bromide only"},
	}
	for _, c := range cases {
		_, err := ClassifyRecorded(cat, nil, c.ships, c.nats, nil)
		var se *StoredDataError
		if !errors.As(err, &se) || !strings.Contains(se.Msg, c.want) {
			t.Errorf("%s: %v, want a StoredDataError containing %q", c.name, err, c.want)
		}
	}
	// An uncontrolled component the catalogue no longer has is left out, not an error.
	d, err := ClassifyRecorded(cat, nil, []ShipmentTotal{{Year: 2021, Designation: "R-9999", Direction: terms.DirectionImport, Tonnes: num("1")}}, nil, nil)
	if err != nil || len(d.Records) != 0 {
		t.Errorf("uncatalogued uncontrolled: %v, %d records; want none and no error", err, len(d.Records))
	}
}

func TestCoverageNotesAndGapText(t *testing.T) {
	// 1989 has HCFC-22 and HCFC-141b, 1990 only HCFC-22, 1991 nothing of Annex C.
	recs := []Record{rec(1989, hcfc22, Flows{Imports: num("1")}), rec(1989, hcfc141b, Flows{Imports: num("1")}), rec(1990, hcfc22, Flows{Imports: num("1")})}
	notes := CoverageNotes(recs, ScopeCI, []int{1989, 1990, 1991})
	if len(notes) != 1 || !strings.Contains(notes[0], "HCFC-141b has data in other base years but none in 1990;") {
		t.Errorf("coverage notes %q, want one for HCFC-141b lacking 1990 only", notes)
	}
	g := GapText(Gap{Scope: ScopeCI, Year: 1991}, recs, []int{1989, 1990, 1991})
	if !strings.Contains(g, "other base years have data for HCFC-141b, HCFC-22: enter their 1991 totals") {
		t.Errorf("gap text %q", g)
	}
}

func TestFormatTonnes(t *testing.T) {
	for v, want := range map[string]string{"1.5": "1.5", "2": "2", "0.0000004": "0", "-0.0000001": "0", "0.000001": "0.000001"} { // from memory: round half away from zero to 6 places
		if got := FormatTonnes(num(v)); got != want {
			t.Errorf("FormatTonnes(%v) = %q, want %q", v, got, want)
		}
	}
}
