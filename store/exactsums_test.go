package store_test

import (
	"context"
	"strings"
	"testing"
	"time"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/terms"
)

// Sums read back from PostgreSQL exactly: numeric text parsed into exact.Decimal, never a
// float8 in between. A float64 holds 15 to 17 significant digits, so each figure here has
// more (the quantities are invented; the register keeps billionths, numeric(30, 9)).

// TestNationalAndYearFiguresReadBackExactly stores 123456789.123456789 t (18 significant
// digits) as a national entry, an exemption, an official figure, an HFC-23 facility entry
// and a partner's export figure, and reads each back, and the national entries' sum, as
// exactly that decimal. Read as float8, it came back as 123456789.12345679.
func TestNationalAndYearFiguresReadBackExactly(t *testing.T) {
	st := consStore(t)
	ctx := context.Background()
	big := num("123456789.123456789")
	nano := num("0.000000001")
	if err := st.PutNationalEntries(ctx, []store.NationalEntry{
		{Key: "p-1", Year: 2025, Type: store.EntryProduction, Substance: "HCFC-22", Tonnes: big},
		{Key: "p-2", Year: 2025, Type: store.EntryProduction, Substance: "HCFC-22", Tonnes: nano},
	}); err != nil {
		t.Fatal(err)
	}
	es, err := st.ListNationalEntries(ctx, 2025)
	if err != nil || len(es) != 2 {
		t.Fatalf("entries %+v, %v", es, err)
	}
	if !es[0].Tonnes.Equal(big) {
		t.Errorf("entry p-1 reads back as %v t, want exactly %v", es[0].Tonnes, big)
	}
	tot, err := st.NationalTotals(ctx, []int{2025})
	if err != nil || len(tot) != 1 {
		t.Fatalf("totals %+v, %v", tot, err)
	}
	if want := num("123456789.12345679"); !tot[0].Tonnes.Equal(want) { // 123456789.123456789 + 0.000000001, by hand
		t.Errorf("national total = %v t, want exactly %v", tot[0].Tonnes, want)
	}

	if err := st.PutExemptions(ctx, []store.Exemption{{Key: "x-1", CountryCode: "XA", Year: 2025, Scope: "E/I",
		Use: "critical", Amount: big, Unit: "ODP t", Source: "invented decision"}}); err != nil {
		t.Fatal(err)
	}
	if xs, err := st.ListExemptions(ctx, 2025); err != nil || len(xs) != 1 || !xs[0].Amount.Equal(big) {
		t.Errorf("exemptions %+v, %v; want the amount exactly %v", xs, err, big)
	}
	if err := st.PutOfficialFigures(ctx, []store.OfficialFigure{{Key: "b-1", CountryCode: "XA", Kind: "baseline",
		Scope: "C/I", Value: big, Unit: "ODP t", Source: "invented decision"}}); err != nil {
		t.Fatal(err)
	}
	if fs, err := st.ListOfficialFigures(ctx); err != nil || len(fs) != 1 || !fs[0].Value.Equal(big) {
		t.Errorf("official figures %+v, %v; want the value exactly %v", fs, err, big)
	}
	if err := st.PutHFC23Entries(ctx, []store.HFC23Entry{{Key: "h-1", Facility: "invented plant", Year: 2025,
		Generated: big, CapturedUsed: nano, Destroyed: exact.Zero, Emitted: big.Sub(nano)}}); err != nil {
		t.Fatal(err)
	}
	if hs, err := st.ListHFC23Entries(ctx, 2025); err != nil || len(hs) != 1 || !hs[0].Generated.Equal(big) ||
		!hs[0].Emitted.Equal(num("123456789.123456788")) || !hs[0].CapturedUsed.Equal(nano) {
		t.Errorf("HFC-23 entries %+v, %v; want generated %v and emitted 123456789.123456788 exactly", hs, err, big)
	}
	if err := st.PutPartnerExports(ctx, []store.PartnerExport{{Key: "r-1", Year: 2025, Partner: "XB",
		Substance: "HCFC-22", Tonnes: big, Source: "invented report"}}); err != nil {
		t.Fatal(err)
	}
	if rs, err := st.ListPartnerExports(ctx, 2025); err != nil || len(rs) != 1 || !rs[0].Tonnes.Equal(big) {
		t.Errorf("partner exports %+v, %v; want the tonnes exactly %v", rs, err, big)
	}
}

// TestShipmentSumsReadBackExactly records two imports of 9000000000.000000001 kg of
// HCFC-22 each (the most a component's billionths hold, near 2^63): the yearly total, the
// report's lines and the company's imports are 18000000.000000000002 t, 23 significant
// digits. Read as float8 they came back as 18000000.
func TestShipmentSumsReadBackExactly(t *testing.T) {
	st := consStore(t)
	ctx := context.Background()
	d := time.Date(2025, 5, 1, 0, 0, 0, 0, time.UTC)
	kg := store.Nano(9000000000000000001) // 9000000000.000000001 kg in billionths
	c := store.ShipmentComponent{Designation: "HCFC-22", AnnexGroup: "C/I", MassKg: kg, ODPTonnes: kg, CO2eTonnes: 0}
	res, err := st.RecordShipments(ctx, []store.ShipmentRow{
		consShipment("a", "XA-1", "import", "servicing", "virgin", false, d, c),
		consShipment("b", "XA-1", "import", "servicing", "virgin", false, d, c),
	})
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range res {
		if r.Status != store.RecordStored {
			t.Fatalf("row %d: %+v, want stored", i, r)
		}
	}
	want := num("18000000.000000000002") // 2 × 9000000000.000000001 kg / 1000, by hand
	tot, err := st.ShipmentTotals(ctx, []int{2025})
	if err != nil || len(tot) != 1 || !tot[0].Tonnes.Equal(want) {
		t.Errorf("shipment totals %+v, %v; want %v t exactly", tot, err, want)
	}
	lines, err := st.ShipmentLines(ctx, 2025)
	if err != nil || len(lines) != 1 || !lines[0].Tonnes.Equal(want) {
		t.Errorf("shipment lines %+v, %v; want %v t exactly", lines, err, want)
	}
	ci, err := st.CompanyImports(ctx, []string{"C/I"}, terms.QuotaMetricTonnes, []int{2025})
	if err != nil || len(ci) != 1 || !ci[0].Amount.Equal(want) {
		t.Errorf("company imports in t %+v, %v; want %v exactly", ci, err, want)
	}
	// The ODP t column summed as recorded (here the same billionths): 18000000000.000000002.
	co, err := st.CompanyImports(ctx, []string{"C/I"}, terms.QuotaODPTonnes, []int{2025})
	if err != nil || len(co) != 1 || !co[0].Amount.Equal(num("18000000000.000000002")) {
		t.Errorf("company imports in ODP t %+v, %v; want 18000000000.000000002 exactly", co, err)
	}
}

// TestHistoryDetailAmountsAreDecimalStrings: a closed line's detail holds its allocation,
// its draws and its successor's allocation as JSON strings with the exact decimals (here
// 123456789.123456789, 18 significant digits, which a JSON number read into a float64 would
// round to 123456789.12345679), and an event written with the amounts as JSON numbers (as
// before this change) reads back with the same strings, digit for digit. Invented licence.
func TestHistoryDetailAmountsAreDecimalStrings(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1)
	l, err := st.GetLicence(ctx, "L-1")
	if err != nil {
		t.Fatal(err)
	}
	l.QuotaLines[0].Allocated = num("123456789.123456789")
	if _, err := st.AmendLicence(ctx, store.Amendment{Licence: l, EffectiveOn: date(2026, 6, 1), Reason: "test", ExpectedVersion: l.Version}); err != nil {
		t.Fatal(err)
	}
	if _, err := st.CloseQuotaLine(ctx, store.CloseLine{Number: "L-1", LineNumber: 1, EffectiveOn: date(2026, 8, 1), Reason: "test",
		Successor: &store.QuotaLine{AnnexGroup: "C/I", Unit: terms.QuotaODPTonnes, Allocated: num("0.000000001")}}); err != nil {
		t.Fatal(err)
	}
	// An event as an earlier server wrote it: amounts as JSON numbers.
	if _, err := st.Pool().Exec(ctx, `INSERT INTO licence_events (licence_number, kind, effective_on, detail)
	    VALUES ('L-1', 'line-closed', '2026-08-02', '{"line_number": 3, "allocated_before": 123456789.123456789, "drawn": 0.4}')`); err != nil {
		t.Fatal(err)
	}
	evs, err := st.LicenceHistory(ctx, "L-1")
	if err != nil {
		t.Fatal(err)
	}
	var amended, closed, old string
	for _, e := range evs {
		switch {
		case e.Kind == "amended":
			amended = string(e.Detail)
		case e.Kind == "line-closed" && closed == "":
			closed = string(e.Detail)
		case e.Kind == "line-closed":
			old = string(e.Detail)
		}
	}
	for _, c := range []struct{ what, detail, want string }{
		{"amended: the new allocation", amended, `"Allocated": "123456789.123456789"`},
		{"amended: the old allocation", amended, `"Allocated": "1"`},
		{"closed: the allocation before", closed, `"allocated_before": "123456789.123456789"`},
		{"closed: the draws", closed, `"drawn": "0"`},
		{"closed: the successor's allocation", closed, `"Allocated": "0.000000001"`},
		{"old event: the allocation before", old, `"allocated_before":"123456789.123456789"`},
		{"old event: the draws", old, `"drawn":"0.4"`},
		{"old event: the line number stays a number", old, `"line_number":3`},
	} {
		if !strings.Contains(c.detail, c.want) {
			t.Errorf("%s: detail %s, want it to hold %s", c.what, c.detail, c.want)
		}
	}
}
