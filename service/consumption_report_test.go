package service_test

import (
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"os"
	"slices"
	"strconv"
	"strings"
	"testing"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/protobuf/proto"
	"google.golang.org/protobuf/reflect/protoreflect"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// yearReportScenario records the invented year of testdata/year-report-2025.csv and returns
// the symbol of every record (shipment key, or P/F/D for the national entries) → its id text.
func yearReportScenario(t *testing.T) (halovetv1.ConsumptionServiceClient, map[string]string) {
	t.Helper()
	c, ids, _ := yearReportScenarioConn(t)
	return c, ids
}

// yearReportScenarioConn is yearReportScenario that also returns the connection.
func yearReportScenarioConn(t *testing.T) (halovetv1.ConsumptionServiceClient, map[string]string, *grpc.ClientConn) {
	t.Helper()
	conn, st := startTestServer(t)
	c := halovetv1.NewConsumptionServiceClient(conn)
	consPutParty(t, conn, &halovetv1.Party{CountryCode: "XB", Name: "Borealia (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5,
		HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, ReportingParty: true})
	ids := map[string]string{}
	add := func(m map[string]int64) {
		for k, v := range m {
			ids[k] = fmt.Sprint(v)
		}
	}
	add(consRecordFrom(t, st, "XA",
		consShip{"h1", "XB-1", "import", "servicing", "virgin", false, 2025, "HCFC-22", 10},
		consShip{"h2", "XB-1", "import", "servicing", "used", false, 2025, "HCFC-22", 2},
		consShip{"h3", "XB-1", "import", "destruction", "virgin", false, 2025, "HCFC-22", 3},
		consShip{"h4", "XB-1", "export", "servicing", "virgin", false, 2025, "HCFC-22", 1},
		consShip{"h5", "XB-1", "export", "feedstock", "virgin", false, 2025, "HCFC-22", 2},
		consShip{"h6", "XB-1", "import", "servicing", "virgin", false, 2025, "HFC-134a", 100},
		consShip{"h7", "XB-1", "transit", "servicing", "virgin", false, 2025, "HFC-134a", 9},
	))
	add(consRecordFrom(t, st, "XC",
		consShip{"c1", "XB-2", "import", "feedstock", "virgin", false, 2025, "carbon tetrachloride", 50},
		consShip{"c2", "XB-2", "import", "qps", "virgin", false, 2025, "methyl bromide", 20},
		consShip{"c3", "XB-2", "import", "critical-use", "virgin", false, 2025, "methyl bromide", 4},
		consShip{"c4", "XB-2", "import", "laboratory", "virgin", false, 2025, "CFC-12", 0.5},
		consShip{"c5", "XB-2", "export", "servicing", "used", false, 2025, "HCFC-22", 1},
	))
	add(consRecordFrom(t, st, "XD",
		consShip{"d1", "XB-3", "import", "servicing", "virgin", true, 2025, "HFC-134a", 7},
		consShip{"d2", "XB-3", "export", "servicing", "virgin", true, 2025, "HFC-134a", 5},
	))
	p, f, d := consEntry(2025, prod, "HCFC-22", 30), outsideCustoms(consEntry(2025, feed, "HCFC-22", 5)), outsideCustoms(consEntry(2025, dest, "CFC-12", 1))
	consRecordEntries(t, c, p, f, d)
	ids["P"], ids["F"], ids["D"] = p.GetEntryKey(), f.GetEntryKey(), d.GetEntryKey()
	if _, err := c.RecordHfc23Entries(context.Background(), &halovetv1.RecordHfc23EntriesRequest{Entries: []*halovetv1.Hfc23Entry{
		{EntryKey: "HFC23-A-2025", Facility: "plant A (invented)", Year: 2025, GeneratedTonnes: "12", CapturedUsedTonnes: "2", DestroyedTonnes: "9", EmittedTonnes: "1"}}}); err != nil {
		t.Fatal(err)
	}
	if _, err := c.RecordExemptions(context.Background(), &halovetv1.RecordExemptionsRequest{Exemptions: []*halovetv1.AuthorisedExemption{
		{ExemptionKey: "CUE-2025", Year: 2025, AnnexGroup: "E/I", Use: halovetv1.ExemptedUse_EXEMPTED_USE_CRITICAL, Amount: "2.4", Source: "invented decision XB/1"}}}); err != nil {
		t.Fatal(err)
	}
	return c, ids, conn
}

// recordsOf lists the ids (shipments) and keys (entries) behind a report line.
func recordsOf(m protoreflect.Message) []string {
	var out []string
	for _, name := range []protoreflect.Name{"shipment_ids", "entry_keys"} {
		fd := m.Descriptor().Fields().ByName(name)
		if fd == nil {
			continue
		}
		l := m.Get(fd).List()
		for i := 0; i < l.Len(); i++ {
			out = append(out, fmt.Sprint(l.Get(i).Interface()))
		}
	}
	slices.Sort(out)
	return out
}

// TestYearReportByHand builds a year with every category of the report and compares it
// line by line with testdata/year-report-2025.csv (hand computation and sources there);
// no other line may appear. Its totals must equal GetConsumption's for every group.
func TestYearReportByHand(t *testing.T) {
	c, ids := yearReportScenario(t)
	ctx := context.Background()
	rep, err := c.GetYearReport(ctx, &halovetv1.GetYearReportRequest{Year: 2025})
	if err != nil {
		t.Fatal(err)
	}
	fh, err := os.Open("testdata/year-report-2025.csv")
	if err != nil {
		t.Fatalf("the hand computation is missing: %v", err)
	}
	defer fh.Close()
	r := csv.NewReader(fh)
	r.Comment = '#'
	rows, err := r.ReadAll()
	if err != nil || len(rows) < 2 {
		t.Fatalf("testdata/year-report-2025.csv: %v (%d rows)", err, len(rows))
	}
	sections := map[string][]protoreflect.Message{}
	lineKey := map[protoreflect.Message]string{}
	trade := func(name string, ls []*halovetv1.YearTradeLine) {
		for _, l := range ls {
			m := l.ProtoReflect()
			sections[name] = append(sections[name], m)
			lineKey[m] = fmt.Sprintf("%s|%s|%v", l.GetPartnerCountry(), l.GetSubstance(), l.GetPartnerNonParty())
		}
	}
	qty := func(name string, ls []*halovetv1.YearQuantityLine) {
		for _, l := range ls {
			m := l.ProtoReflect()
			sections[name] = append(sections[name], m)
			lineKey[m] = fmt.Sprintf("%s|%s|false", strings.ReplaceAll(strings.ToLower(strings.TrimPrefix(l.GetBasis().String(), "QUANTITY_BASIS_")), "_", "-"), l.GetSubstance())
		}
	}
	trade("import", rep.GetImports())
	trade("export", rep.GetExports())
	qty("production", rep.GetProduction())
	qty("destruction", rep.GetDestruction())
	qty("feedstock", rep.GetFeedstock())
	qty("qps", rep.GetQps())
	for _, g := range rep.GetGroups() {
		if g.GetHasData() {
			m := g.ProtoReflect()
			sections["group"] = append(sections["group"], m)
			lineKey[m] = "|" + g.GetAnnexGroup() + "|false"
		}
	}
	for _, h := range rep.GetHfc23() {
		m := h.ProtoReflect()
		sections["hfc23"] = append(sections["hfc23"], m)
		lineKey[m] = h.GetFacility() + "|HFC-23|false"
	}
	want := map[string]map[string]bool{}
	for i, row := range rows[1:] {
		sec, partner, sub, np, field, value, records := row[0], row[1], row[2], row[3] == "yes", row[4], row[5], row[6]
		k := fmt.Sprintf("%s|%s|%v", partner, sub, np)
		if want[sec] == nil {
			want[sec] = map[string]bool{}
		}
		want[sec][k] = true
		var line protoreflect.Message
		for _, m := range sections[sec] {
			if lineKey[m] == k {
				line = m
			}
		}
		if line == nil {
			t.Errorf("row %d: no %s line %s in the report", i+2, sec, k)
			continue
		}
		fd := line.Descriptor().Fields().ByName(protoreflect.Name(field))
		if fd == nil {
			t.Fatalf("row %d: field %s unknown", i+2, field)
		}
		wantV, err := strconv.ParseFloat(value, 64)
		if err != nil {
			t.Fatalf("row %d: %v", i+2, err)
		}
		consNear(t, fmt.Sprintf("%s %s %s (%s)", sec, k, field, row[7]), line.Get(fd).String(), wantV)
		if records != "" {
			var wantIDs []string
			for _, s := range strings.Split(records, ";") {
				wantIDs = append(wantIDs, ids[s])
			}
			slices.Sort(wantIDs)
			if got := recordsOf(line); !slices.Equal(got, wantIDs) {
				t.Errorf("row %d: %s %s records %v, want %v (%s)", i+2, sec, k, got, wantIDs, records)
			}
		}
	}
	for sec, ls := range sections {
		for _, m := range ls {
			if !want[sec][lineKey[m]] {
				t.Errorf("unexpected %s line %s in the report", sec, lineKey[m])
			}
		}
	}
	// Non-Party trade both ways, and the groups without data.
	if len(rep.GetImportsNonParty()) != 1 || rep.GetImportsNonParty()[0].GetPartnerCountry() != "XD" ||
		len(rep.GetExportsNonParty()) != 1 || rep.GetExportsNonParty()[0].GetNewTonnes() != "5" {
		t.Errorf("non-Party trade: imports %v exports %v, want XD 7 t in and 5 t out", rep.GetImportsNonParty(), rep.GetExportsNonParty())
	}

	// The year's authorised exemption, with its source.
	if ex := rep.GetExemptions(); len(ex) != 1 || ex[0].GetSource() != "invented decision XB/1" || ex[0].GetAmount() != "2.4" {
		t.Errorf("exemptions %v, want the critical use of 2.4 ODP t with its decision", ex)
	}

	// The report's totals equal the consumption report's, group by group.
	cons, err := c.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2025})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(rep.GetNoDataGroups(), cons.GetNoDataGroups()) {
		t.Errorf("no data: report %v, consumption %v", rep.GetNoDataGroups(), cons.GetNoDataGroups())
	}
	for _, g := range rep.GetGroups() {
		cg := consGroup(cons, g.GetAnnexGroup())
		if (cg != nil) != g.GetHasData() {
			t.Errorf("%s: has_data %v in the report, in the consumption report %v", g.GetAnnexGroup(), g.GetHasData(), cg != nil)
			continue
		}
		consExact(t, g.GetAnnexGroup()+" t", g.GetConsumptionTonnes(), cg.GetConsumptionTonnes())
		consExact(t, g.GetAnnexGroup()+" ODP t", g.GetConsumptionOdpTonnes(), cg.GetConsumptionOdpTonnes())
		consExact(t, g.GetAnnexGroup()+" CO2-eq t", g.GetConsumptionCo2ETonnes(), cg.GetConsumptionCo2ETonnes())
	}
	// HFC-23 by-product beside Annex F, never lowering it: F/I is 107 × 1430 only, and
	// F/II has no data.
	consNear(t, "F/I with HFC-23 by-product beside it", consGroup(cons, "F/I").GetConsumptionCo2ETonnes(), 153010)
	if consGroup(cons, "F/II") != nil || len(cons.GetHfc23ByProduct()) != 1 {
		t.Errorf("F/II %v, by-product %v: want no F/II consumption and the facility beside it", consGroup(cons, "F/II"), cons.GetHfc23ByProduct())
	}

	// The same register gives the same report, byte for byte.
	again, err := c.GetYearReport(ctx, &halovetv1.GetYearReportRequest{Year: 2025})
	if err != nil {
		t.Fatal(err)
	}
	b1, _ := proto.MarshalOptions{Deterministic: true}.Marshal(rep)
	b2, _ := proto.MarshalOptions{Deterministic: true}.Marshal(again)
	if string(b1) != string(b2) {
		t.Error("two reports of the same register differ")
	}
}

// TestHfc23EntriesRefused: a facility cannot release more than it generated, and has one
// entry per year.
func TestHfc23EntriesRefused(t *testing.T) {
	conn, _ := startTestServer(t)
	c := halovetv1.NewConsumptionServiceClient(conn)
	_, err := c.RecordHfc23Entries(context.Background(), &halovetv1.RecordHfc23EntriesRequest{Entries: []*halovetv1.Hfc23Entry{
		{EntryKey: "k", Facility: "plant B (invented)", Year: 2025, GeneratedTonnes: "5", DestroyedTonnes: "4", EmittedTonnes: "2"}}})
	consCode(t, err, codes.InvalidArgument, "entries[0].generated_tonnes")
	// One entry per facility and year: a second key for the same one is refused.
	e := &halovetv1.Hfc23Entry{EntryKey: "k1", Facility: "plant B (invented)", Year: 2025, GeneratedTonnes: "5", DestroyedTonnes: "5"}
	if _, err := c.RecordHfc23Entries(context.Background(), &halovetv1.RecordHfc23EntriesRequest{Entries: []*halovetv1.Hfc23Entry{e}}); err != nil {
		t.Fatal(err)
	}
	e.EntryKey = "k2"
	_, err = c.RecordHfc23Entries(context.Background(), &halovetv1.RecordHfc23EntriesRequest{Entries: []*halovetv1.Hfc23Entry{e}})
	consCode(t, err, codes.AlreadyExists, "under another entry_key")
}

// TestYearReportClosedYearStable: a closed year's report says so and stays the same bytes;
// the year's national entries, exemptions, limits and HFC-23 entries are refused until it
// is reopened, and the reopened year reads provisional again. Data INVENTED (the scenario
// of TestYearReportByHand).
func TestYearReportClosedYearStable(t *testing.T) {
	c, ids, conn := yearReportScenarioConn(t)
	ctx := context.Background()
	ship := halovetv1.NewShipmentServiceClient(conn)
	// A voided shipment leaves the report as it leaves the consumption totals: h6 (100 t
	// of HFC-134a from XA) voided, F/I imports 107 − 100 = 7 t, 7 × 1430 = 10010 CO2-eq t.
	h6, _ := strconv.ParseInt(ids["h6"], 10, 64)
	if _, err := ship.VoidShipment(ctx, &halovetv1.VoidShipmentRequest{ShipmentId: h6, Reason: "invented: declared twice"}); err != nil {
		t.Fatal(err)
	}
	rep, err := c.GetYearReport(ctx, &halovetv1.GetYearReportRequest{Year: 2025})
	if err != nil {
		t.Fatal(err)
	}
	cons, err := c.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2025})
	if err != nil {
		t.Fatal(err)
	}
	for _, g := range rep.GetGroups() {
		if g.GetAnnexGroup() == "F/I" {
			consNear(t, "F/I after the void", g.GetConsumptionCo2ETonnes(), 10010)
			consNear(t, "F/I in the consumption report after the void", consGroup(cons, "F/I").GetConsumptionCo2ETonnes(), 10010)
		}
	}
	for _, l := range rep.GetImports() {
		if slices.Contains(l.GetShipmentIds(), h6) {
			t.Errorf("the voided shipment %d is still behind import line %v", h6, l)
		}
	}
	report := func() ([]byte, *halovetv1.GetYearReportResponse) {
		t.Helper()
		rep, err := c.GetYearReport(ctx, &halovetv1.GetYearReportRequest{Year: 2025})
		if err != nil {
			t.Fatal(err)
		}
		b, err := proto.MarshalOptions{Deterministic: true}.Marshal(rep)
		if err != nil {
			t.Fatal(err)
		}
		return b, rep
	}
	if _, rep = report(); rep.GetState() != halovetv1.ReportState_REPORT_STATE_PROVISIONAL {
		t.Fatalf("open year: state %q, want provisional", rep.GetState())
	}
	if _, err := ship.CloseYear(ctx, &halovetv1.CloseYearRequest{Year: 2025, Reason: "invented: data report sent"}); err != nil {
		t.Fatal(err)
	}
	first, rep := report()
	if rep.GetState() != halovetv1.ReportState_REPORT_STATE_CLOSED || !hasNote(rep.GetNotes(), "invented: data report sent") {
		t.Errorf("closed year: state %q notes %q, want closed with the reason", rep.GetState(), rep.GetNotes())
	}
	// Every kind of the year's figures is refused while it is closed.
	_, err = c.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{consEntry(2025, prod, "HCFC-22", 1)}})
	consCode(t, err, codes.FailedPrecondition, "reporting year 2025 is closed")
	_, err = c.RecordExemptions(ctx, &halovetv1.RecordExemptionsRequest{Exemptions: []*halovetv1.AuthorisedExemption{
		{ExemptionKey: "CUE-2025", Year: 2025, AnnexGroup: "E/I", Use: halovetv1.ExemptedUse_EXEMPTED_USE_CRITICAL, Amount: "9", Source: "invented"}}})
	consCode(t, err, codes.FailedPrecondition, "reporting year 2025 is closed")
	_, err = c.RecordHfc23Entries(ctx, &halovetv1.RecordHfc23EntriesRequest{Entries: []*halovetv1.Hfc23Entry{
		{EntryKey: "HFC23-A-2025", Facility: "plant A (invented)", Year: 2025, GeneratedTonnes: "99", EmittedTonnes: "99"}}})
	consCode(t, err, codes.FailedPrecondition, "reporting year 2025 is closed")
	_, err = c.RecordOfficialFigures(ctx, &halovetv1.RecordOfficialFiguresRequest{Figures: []*halovetv1.OfficialFigure{
		{FigureKey: "L", Kind: halovetv1.OfficialFigureKind_OFFICIAL_FIGURE_KIND_LIMIT, Year: 2025, AnnexGroup: "C/I", Amount: "1", Source: "invented"}}})
	consCode(t, err, codes.FailedPrecondition, "reporting year 2025 is closed")
	// Moving an entry of the closed year to another year is a change of the closed year too.
	p := consEntry(2025, prod, "HCFC-22", 30)
	p.Year = 2026
	_, err = c.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{p}})
	consCode(t, err, codes.FailedPrecondition, "reporting year 2025 is closed")
	if again, _ := report(); !bytes.Equal(first, again) {
		t.Error("the closed year's report changed")
	}
	if _, err := ship.ReopenYear(ctx, &halovetv1.ReopenYearRequest{Year: 2025, Reason: "invented: correction"}); err != nil {
		t.Fatal(err)
	}
	if _, rep := report(); rep.GetState() != halovetv1.ReportState_REPORT_STATE_PROVISIONAL {
		t.Errorf("reopened year: state %q, want provisional", rep.GetState())
	}
}
