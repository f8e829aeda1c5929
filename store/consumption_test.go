package store_test

import (
	"context"
	"errors"
	"testing"
	"time"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// consStore opens a fresh database with the seed catalogue written into it (national
// entries refer to catalogue substances).
func consStore(t *testing.T) *store.Store {
	t.Helper()
	st, _ := openTestStore(t)
	subs, blends, err := substances.Seed()
	if err != nil {
		t.Fatal(err)
	}
	if err := st.SyncSeed(context.Background(), subs, blends); err != nil {
		t.Fatal(err)
	}
	return st
}

// consShipment is an invented shipment without licence draws; components are
// (designation, group, kg, ODP t, CO2-eq t).
func consShipment(key, company, direction, purpose, condition string, nonParty bool, day time.Time, comps ...store.ShipmentComponent) store.ShipmentRow {
	var kg, odp, co2 store.Nano
	for _, c := range comps {
		kg += c.MassKg
		odp += c.ODPTonnes
		co2 += c.CO2eTonnes
	}
	d, err1 := terms.ParseDirection(direction)
	p, err2 := terms.ParsePurpose(purpose)
	c, err3 := terms.ParseCondition(condition)
	if err := errors.Join(err1, err2, err3); err != nil {
		panic(err) // the test's own words
	}
	return store.ShipmentRow{CompanyID: company, RecordKey: key, Fingerprint: "fp-" + key, Direction: d,
		PartnerCountry: "XB", DeclarationDate: day, ResolvedDesignation: comps[0].Designation, EntryKind: "substance",
		Purpose: p, Condition: c, NetMassKg: kg, ODPTonnes: odp, CO2eTonnes: co2,
		CountsInConsumption: direction == "import" && condition != "used", PartnerNonParty: nonParty,
		RecordJSON: []byte(`{}`), Components: comps}
}

func comp(des, group string, kg, odp, co2 float64) store.ShipmentComponent {
	return store.ShipmentComponent{Designation: des, AnnexGroup: group, MassKg: store.ToNano(kg),
		ODPTonnes: store.ToNano(odp), CO2eTonnes: store.ToNano(co2)}
}

// near reports whether an exact figure equals a decimal written as a float64 literal.
func near(a exact.Decimal, b float64) bool { return a.Equal(exact.OfFloat(b)) }

func TestNationalEntriesReplaceByKeyAndRefuseBadRows(t *testing.T) {
	st := consStore(t)
	ctx := context.Background()
	// Worked example with invented data.
	in := []store.NationalEntry{
		{Key: "p-2025-22", Year: 2025, Type: store.EntryProduction, Substance: "HCFC-22", Tonnes: num("10"), Note: "plant 1"},
		{Key: "p-2025-22b", Year: 2025, Type: store.EntryProduction, Substance: "HCFC-22", Tonnes: num("2.5")},
		{Key: "d-2025-22", Year: 2025, Type: store.EntryDestruction, Substance: "HCFC-22", Tonnes: num("1")},
		{Key: "h-1989-11", Year: 1989, Type: store.EntryHistoricalImport, Substance: "CFC-11", Tonnes: num("100")},
	}
	if err := st.PutNationalEntries(ctx, in); err != nil {
		t.Fatal(err)
	}
	// Same key again: replaced, not added.
	if err := st.PutNationalEntries(ctx, []store.NationalEntry{{Key: "p-2025-22", Year: 2025, Type: store.EntryProduction,
		Substance: "HCFC-22", Tonnes: num("12")}}); err != nil {
		t.Fatal(err)
	}
	got, err := st.ListNationalEntries(ctx, 2025)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 3 {
		t.Fatalf("2025 entries: %d (%+v), want 3 (the 1989 entry is another year)", len(got), got)
	}
	all, _ := st.ListNationalEntries(ctx, 0)
	if len(all) != 4 || all[0].Year != 1989 {
		t.Fatalf("all entries: %+v, want 4 starting with 1989", all)
	}
	tot, err := st.NationalTotals(ctx, []int{2025})
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]float64{store.EntryProduction: 14.5, store.EntryDestruction: 1} // 12 + 2.5 after the replacement
	if len(tot) != 2 {
		t.Fatalf("totals: %+v, want production and destruction of HCFC-22", tot)
	}
	for _, x := range tot {
		if x.Substance != "HCFC-22" || !near(x.Tonnes, want[x.Type]) {
			t.Errorf("total %+v, want %v t of HCFC-22", x, want[x.Type])
		}
	}
	var audits int
	if err := st.Pool().QueryRow(ctx, `SELECT count(*) FROM audit_log WHERE entity = 'national_entry'`).Scan(&audits); err != nil || audits != 5 {
		t.Fatalf("audit rows %d (err %v), want 5: one per entry stored, replacements included", audits, err)
	}

	// A substance outside the catalogue table fails the whole call: nothing of it is stored.
	err = st.PutNationalEntries(ctx, []store.NationalEntry{
		{Key: "ok", Year: 2025, Type: store.EntryFeedstock, Substance: "carbon tetrachloride", Tonnes: num("1")},
		{Key: "bad", Year: 2025, Type: store.EntryProduction, Substance: "HCFC-999", Tonnes: num("1")},
	})
	if !errors.Is(err, store.ErrNotFound) {
		t.Fatalf("unknown substance: err %v, want ErrNotFound", err)
	}
	// The schema refuses negative tonnes and unknown kinds (migration 00002).
	if err := st.PutNationalEntries(ctx, []store.NationalEntry{{Key: "neg", Year: 2025, Type: store.EntryProduction,
		Substance: "HCFC-22", Tonnes: num("-1")}}); !errors.Is(err, store.ErrConflict) {
		t.Fatalf("negative tonnes: err %v, want ErrConflict", err)
	}
	if err := st.PutNationalEntries(ctx, []store.NationalEntry{{Key: "kind", Year: 2025, Type: "stockpile",
		Substance: "HCFC-22", Tonnes: num("1")}}); !errors.Is(err, store.ErrConflict) {
		t.Fatalf("unknown kind: err %v, want ErrConflict", err)
	}
	if after, _ := st.ListNationalEntries(ctx, 0); len(after) != 4 {
		t.Fatalf("%d entries after the refused calls, want still 4", len(after))
	}
}

func TestShipmentTotalsAggregateComponentsInSQL(t *testing.T) {
	st := consStore(t)
	ctx := context.Background()
	d25 := time.Date(2025, 5, 1, 0, 0, 0, 0, time.UTC)
	d24 := time.Date(2024, 5, 1, 0, 0, 0, 0, time.UTC)
	// Invented shipments. ODP/GWP figures are as the recorder would compute them:
	// HCFC-22 ODP 0.055 (Montreal Protocol Annex C); HFC-125 GWP 3500, HFC-143a 4470
	// (Montreal Protocol Annex F).
	rows := []store.ShipmentRow{
		consShipment("a", "XA-1", "import", "servicing", "virgin", false, d25, comp("HCFC-22", "C/I", 1000, 0.055, 0)),
		// A blend split per component (R-408A nominal 7/46/47 % HFC-125/HFC-143a/HCFC-22,
		// ASHRAE 34, reference/blends.csv), 1000 kg.
		consShipment("b", "XA-1", "import", "servicing", "virgin", false, d25,
			comp("HFC-125", "F/I", 70, 0, 0.07*3500), comp("HFC-143a", "F/I", 460, 0, 0.46*4470), comp("HCFC-22", "C/I", 470, 0.02585, 0)),
		consShipment("c", "XA-2", "import", "servicing", "virgin", false, d25, comp("HCFC-22", "C/I", 250, 0.01375, 0)),
		consShipment("d", "XA-1", "export", "servicing", "virgin", true, d25, comp("HCFC-22", "C/I", 200, 0.011, 0)),
		consShipment("e", "XA-2", "import", "servicing", "used", false, d25, comp("HCFC-22", "C/I", 300, 0.0165, 0)),
		consShipment("f", "XA-1", "import", "servicing", "virgin", false, d24, comp("HCFC-22", "C/I", 100, 0.0055, 0)),
	}
	res, err := st.RecordShipments(ctx, rows)
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range res {
		if r.Status != store.RecordStored {
			t.Fatalf("row %d: %+v, want stored", i, r)
		}
	}
	tot, err := st.ShipmentTotals(ctx, []int{2025})
	if err != nil {
		t.Fatal(err)
	}
	type k struct {
		des, dir, cond string
		np             bool
	}
	got := map[k]store.ShipmentTotal{}
	for _, x := range tot {
		if x.Year != 2025 {
			t.Fatalf("total of year %d in a 2025 query", x.Year)
		}
		got[k{x.Designation, x.Direction.String(), x.Condition.String(), x.PartnerNonParty}] = x
	}
	cases := []struct {
		key    k
		tonnes float64
		n      int64
	}{
		{k{"HCFC-22", "import", "virgin", false}, 1.72, 3}, // 1000 + 470 + 250 kg
		{k{"HCFC-22", "export", "virgin", true}, 0.2, 1},
		{k{"HCFC-22", "import", "used", false}, 0.3, 1},
		{k{"HFC-125", "import", "virgin", false}, 0.07, 1},
		{k{"HFC-143a", "import", "virgin", false}, 0.46, 1},
	}
	if len(got) != len(cases) {
		t.Fatalf("%d totals (%+v), want %d", len(got), tot, len(cases))
	}
	for _, c := range cases {
		x, ok := got[c.key]
		if !ok || !near(x.Tonnes, c.tonnes) || x.Shipments != c.n {
			t.Errorf("%+v: got %+v, want %v t from %d shipments", c.key, x, c.tonnes, c.n)
		}
	}
	if x := got[k{"HFC-125", "import", "virgin", false}]; x.AnnexGroup != "F/I" || x.Purpose != terms.PurposeServicing {
		t.Errorf("HFC-125 total %+v: want group F/I and purpose servicing carried", x)
	}
	all, _ := st.ShipmentTotals(ctx, nil)
	if len(all) != len(cases)+1 {
		t.Errorf("all years: %d totals, want %d (2025 plus one of 2024)", len(all), len(cases)+1)
	}

	years, err := st.ShipmentYears(ctx)
	if err != nil || len(years) != 2 || years[0] != 2024 || years[1] != 2025 {
		t.Fatalf("shipment years %v (err %v), want [2024 2025]", years, err)
	}

	// Imports counting in consumption, per company, in ODP t: XA-1 0.055 + 0.02585; XA-2
	// 0.01375 (its used import does not count).
	ci, err := st.CompanyImports(ctx, []string{"C/I"}, terms.QuotaODPTonnes, []int{2025})
	if err != nil {
		t.Fatal(err)
	}
	if len(ci) != 2 || ci[0].CompanyID != "XA-1" || !near(ci[0].Amount, 0.08085) || ci[1].CompanyID != "XA-2" || !near(ci[1].Amount, 0.01375) {
		t.Fatalf("company imports %+v, want XA-1 0.08085 and XA-2 0.01375 ODP t", ci)
	}
	cf, err := st.CompanyImports(ctx, []string{"F/I", "F/II"}, terms.QuotaCO2eTonnes, []int{2024, 2025})
	if err != nil {
		t.Fatal(err)
	}
	// 0.07 t × 3500 + 0.46 t × 4470 = 245 + 2056.2 = 2301.2 CO2-eq t.
	if len(cf) != 1 || !near(cf[0].Amount, 2301.2) {
		t.Fatalf("HFC company imports %+v, want XA-1 2301.2 CO2-eq t", cf)
	}
	if _, err := st.CompanyImports(ctx, []string{"C/I"}, terms.QuotaUnitUnspecified, []int{2025}); err == nil {
		t.Fatal("an unspecified unit accepted; want an error naming the accepted units")
	}
}

func TestReportingParty(t *testing.T) {
	st := consStore(t)
	ctx := context.Background()
	if _, err := st.ReportingParty(ctx); !errors.Is(err, store.ErrNoReportingParty) {
		t.Fatalf("no party: err %v, want ErrNoReportingParty", err)
	}
	// Invented Parties with user-assigned codes.
	if err := st.PutParty(ctx, store.Party{CountryCode: "XB", PartyType: terms.PartyTypeNonArticle5, HFCGroup: terms.HFCGroupNonA5}); err != nil {
		t.Fatal(err)
	}
	if err := st.PutParty(ctx, store.Party{CountryCode: "XA", PartyType: terms.PartyTypeArticle5, HFCGroup: terms.HFCGroupA5Group1, ReportingParty: true}); err != nil {
		t.Fatal(err)
	}
	p, err := st.ReportingParty(ctx)
	if err != nil || p.CountryCode != "XA" || p.HFCGroup != terms.HFCGroupA5Group1 {
		t.Fatalf("reporting party %+v (err %v), want XA a5-group-1", p, err)
	}
}
