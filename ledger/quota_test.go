package ledger_test

import (
	"context"
	"errors"
	"github.com/halovet/halovet/terms"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/ledger"
	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
)

// The consumption workflows on a real register: a migrated PostgreSQL database per test
// (pgtest), written through the store, read through the server's adapter.
//
// All quantities, companies and Parties are INVENTED (user-assigned code XA). Values with
// sources: HCFC-22 ODP 0.055 (Montreal Protocol Annex C Group I); the Article 5 HCFC
// baseline is the mean of 2009 and 2010 consumption and the 2025 step allows 32.5 % of it
// (Art. 5 para 8 ter as adjusted by Decision XIX/6 para 3 and 4).

func TestMain(m *testing.M) { pgtest.Main(m) }

var day0 = time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)

// register is a fresh register holding the seed catalogue, the reporting Party XA
// (Article 5, HFC group 1), companies XA-1001 and XA-1002, and the data of the plan below.
func register(t *testing.T) (*store.Store, *ledger.Consumption, func() *substances.Catalogue) {
	t.Helper()
	ctx := context.Background()
	url := pgtest.NewDatabase(t, "halovet_ledger", func(ctx context.Context, url string) error {
		_, err := store.Migrate(ctx, url)
		return err
	})
	st, err := store.Open(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(st.Close)
	cat := seedCatalogue(t)
	subs, blends, err := substances.Seed()
	if err != nil {
		t.Fatal(err)
	}
	if err := st.SyncSeed(ctx, subs, blends); err != nil {
		t.Fatal(err)
	}
	if err := st.PutParty(ctx, store.Party{CountryCode: "XA", Name: "Xandria (invented)", PartyType: terms.PartyTypeArticle5, HFCGroup: terms.HFCGroupA5Group1}); err != nil {
		t.Fatal(err)
	}
	if _, err := st.SetReportingParty(ctx, store.ReportingPartyChange{CountryCode: "XA"}); err != nil {
		t.Fatal(err)
	}
	for _, id := range []string{"XA-1001", "XA-1002"} {
		if err := st.PutCompany(ctx, store.Company{CompanyID: id, Name: "invented", CountryCode: "XA"}); err != nil {
			t.Fatal(err)
		}
	}
	// Baseline: 40 t HCFC-22 imported in 2009 and in 2010 (historical totals): 2.2 ODP t.
	if err := st.PutNationalEntries(ctx, []store.NationalEntry{
		{Key: "HI-2009", Year: 2009, Type: store.EntryHistoricalImport, Substance: "HCFC-22", Tonnes: num("40")},
		{Key: "HI-2010", Year: 2010, Type: store.EntryHistoricalImport, Substance: "HCFC-22", Tonnes: num("40")},
	}); err != nil {
		t.Fatal(err)
	}
	// Reference year 2025: XA-1001 imports 3 t HCFC-22 (0.165 ODP t), XA-1002 1 t (0.055).
	record(t, st, "S-1", "XA-1001", 3)
	record(t, st, "S-2", "XA-1002", 1)
	src := service.NewReportSource(st, func() time.Time { return day0 })
	return st, ledger.NewConsumption(src, ledger.ConsumptionOptions{Catalogue: func() *substances.Catalogue { return cat }, Drafts: src}), func() *substances.Catalogue { return cat }
}

// record writes one 2025 import of new HCFC-22 for servicing, as the recorder stores it.
func record(t *testing.T, st *store.Store, key, company string, tonnes float64) {
	t.Helper()
	odp := tonnes * 0.055 // HCFC-22 ODP: Montreal Protocol Annex C Group I
	row := store.ShipmentRow{CompanyID: company, RecordKey: key, Fingerprint: "fp-" + key, Direction: terms.DirectionImport,
		PartnerCountry: "XC", DeclarationDate: time.Date(2025, 6, 1, 0, 0, 0, 0, time.UTC), ResolvedDesignation: "HCFC-22",
		EntryKind: "substance", Purpose: terms.PurposeServicing, Condition: terms.ConditionVirgin, RecordJSON: []byte(`{}`), CountsInConsumption: true,
		NetMassKg: store.ToNano(tonnes * 1000), ODPTonnes: store.ToNano(odp),
		Components: []store.ShipmentComponent{{Designation: "HCFC-22", AnnexGroup: "C/I", MassKg: store.ToNano(tonnes * 1000), ODPTonnes: store.ToNano(odp)}}}
	if _, err := st.RecordShipments(context.Background(), []store.ShipmentRow{row}); err != nil {
		t.Fatal(err)
	}
}

func near(t *testing.T, what string, got exact.Decimal, want float64) {
	t.Helper()
	if math.Abs(got.Float64()-want) > 1e-9 {
		t.Errorf("%s = %s, want %.9f", what, got, want)
	}
}

var plan2026 = ledger.QuotaPlanRequest{AnnexGroup: "C/I", Year: 2026, ReferenceYears: []int{2025}, IssueDrafts: true}

// TestPlanQuotasIssuesDrafts: allowed 2026 = 2.2 × 32.5 % = 0.715 ODP t = 715 units of
// 0.001; exact shares 536.25 and 178.75, floors 536 + 178, the unit left to the larger
// remainder (XA-1002): 0.536 and 0.179 (largest remainder: controls.PlanQuotas).
func TestPlanQuotasIssuesDrafts(t *testing.T) {
	st, cons, _ := register(t)
	ctx := context.Background()
	p, err := cons.PlanQuotas(ctx, plan2026)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "allowed", p.Level.Value, 0.715)
	want := map[string]float64{"XA-1001": 0.536, "XA-1002": 0.179}
	if len(p.Proposals) != 2 || len(p.Issued) != 2 {
		t.Fatalf("proposals %+v, issued %v; want two of each", p.Proposals, p.Issued)
	}
	for _, q := range p.Proposals {
		near(t, q.CompanyID+" quota", q.Amount, want[q.CompanyID])
		l, err := st.GetLicence(ctx, q.DraftLicenceNumber)
		if err != nil {
			t.Fatalf("draft of %s: %v", q.CompanyID, err)
		}
		if l.Status != terms.LicenceDraft || len(l.QuotaLines) != 1 || l.QuotaLines[0].Unit != terms.QuotaODPTonnes {
			t.Errorf("draft %+v: want a draft with one ODP t line", l)
		}
		near(t, q.DraftLicenceNumber+" allocated", l.QuotaLines[0].Allocated, want[q.CompanyID])
	}
	// Planning again with half the level amends both drafts in place.
	half := plan2026
	half.Fraction = num("0.5")
	if _, err := cons.PlanQuotas(ctx, half); err != nil {
		t.Fatalf("re-plan: %v", err)
	}
	l, err := st.GetLicence(ctx, "CI-DRAFT-2026-XA-1001")
	if err != nil {
		t.Fatal(err)
	}
	// 357.5 units: exact 268.125 and 89.375; floors 268 + 89 = 357, no unit left over.
	near(t, "re-planned XA-1001", l.QuotaLines[0].Allocated, 0.268)
}

// TestPlanQuotasAllOrNothing: one draft of the plan cannot be stored (a licence of its
// number is active, no longer a draft), so no draft of the plan is: the other company's,
// which would have been issued first, is not in the register either.
func TestPlanQuotasAllOrNothing(t *testing.T) {
	st, cons, _ := register(t)
	ctx := context.Background()
	if err := st.IssueLicence(ctx, store.Licence{Number: "CI-DRAFT-2026-XA-1002", CompanyID: "XA-1002", Directions: []terms.Direction{terms.DirectionImport},
		ValidFrom: time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC), ValidTo: time.Date(2026, 12, 31, 0, 0, 0, 0, time.UTC), Status: terms.LicenceActive,
		QuotaLines: []store.QuotaLine{{LineNumber: 1, AnnexGroup: "C/I", Unit: terms.QuotaODPTonnes, Allocated: num("0.05")}}}, "issued by hand"); err != nil {
		t.Fatal(err)
	}
	_, err := cons.PlanQuotas(ctx, plan2026)
	if !errors.Is(err, ledger.ErrRefused) || !strings.Contains(err.Error(), "CI-DRAFT-2026-XA-1002 exists and is active") {
		t.Fatalf("plan: %v; want refused naming the active licence", err)
	}
	if _, err := st.GetLicence(ctx, "CI-DRAFT-2026-XA-1001"); !errors.Is(err, store.ErrNotFound) {
		t.Errorf("XA-1001's draft after a refused plan: %v; want not found (no half plan)", err)
	}
	l, err := st.GetLicence(ctx, "CI-DRAFT-2026-XA-1002")
	if err != nil {
		t.Fatal(err)
	}
	near(t, "active licence left as it was", l.QuotaLines[0].Allocated, 0.05)
}

// TestPlanQuotasAmendsOnlyDrafts: while a planner re-plans, another transaction activates
// one of the drafts. The planner's amendment waits for that transaction's row lock and
// then sees the licence active: it refuses the plan and changes nothing (a check-then-act
// amendment would have overwritten the active licence's quota).
func TestPlanQuotasAmendsOnlyDrafts(t *testing.T) {
	st, cons, _ := register(t)
	ctx := context.Background()
	if _, err := cons.PlanQuotas(ctx, plan2026); err != nil {
		t.Fatal(err)
	}
	tx, err := st.Pool().Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback(ctx) //nolint:errcheck // committed below; rollback after commit is a no-op
	if _, err := tx.Exec(ctx, `UPDATE licences SET status = 'active' WHERE licence_number = 'CI-DRAFT-2026-XA-1002'`); err != nil {
		t.Fatal(err)
	}
	half := plan2026
	half.Fraction = num("0.5")
	done := make(chan error, 1)
	go func() {
		_, err := cons.PlanQuotas(ctx, half)
		done <- err
	}()
	// Wait until the planner is blocked on the row the open transaction holds.
	deadline := time.Now().Add(20 * time.Second)
	for {
		var waiting int
		if err := st.Pool().QueryRow(ctx, `SELECT count(*) FROM pg_stat_activity
		    WHERE datname = current_database() AND wait_event_type = 'Lock'`).Scan(&waiting); err != nil {
			t.Fatal(err)
		}
		if waiting > 0 {
			break
		}
		select {
		case err := <-done:
			t.Fatalf("the plan finished (%v) while the status change held the licence", err)
		default:
		}
		if time.Now().After(deadline) {
			t.Fatal("the planner never waited for the licence's row lock")
		}
		time.Sleep(20 * time.Millisecond)
	}
	if err := tx.Commit(ctx); err != nil {
		t.Fatal(err)
	}
	err = <-done
	if !errors.Is(err, ledger.ErrRefused) || !strings.Contains(err.Error(), "CI-DRAFT-2026-XA-1002 exists and is active") {
		t.Fatalf("plan: %v; want refused: XA-1002's licence is active now", err)
	}
	for n, want := range map[string]float64{"CI-DRAFT-2026-XA-1001": 0.536, "CI-DRAFT-2026-XA-1002": 0.179} {
		l, err := st.GetLicence(ctx, n)
		if err != nil {
			t.Fatal(err)
		}
		near(t, n+" after the refused re-plan", l.QuotaLines[0].Allocated, want)
	}
}

// TestPlanQuotasUnknownCompany: a company with recorded imports that is not registered
// refuses the plan; no draft is stored.
func TestPlanQuotasUnknownCompany(t *testing.T) {
	st, cons, _ := register(t)
	ctx := context.Background()
	record(t, st, "S-3", "XA-1003", 1)
	_, err := cons.PlanQuotas(ctx, plan2026)
	if !errors.Is(err, ledger.ErrRefused) || !strings.Contains(err.Error(), "company XA-1003 is not registered") {
		t.Fatalf("plan: %v; want refused naming XA-1003", err)
	}
	if _, err := st.GetLicence(ctx, "CI-DRAFT-2026-XA-1001"); !errors.Is(err, store.ErrNotFound) {
		t.Errorf("XA-1001's draft: %v; want not found", err)
	}
}

// TestPlanQuotasRefusesBadFields: every bad field is named, nothing is read (the
// workflow has no register to read here: a read would fail the test with a panic).
func TestPlanQuotasRefusesBadFields(t *testing.T) {
	cons := ledger.NewConsumption(nil, ledger.ConsumptionOptions{Catalogue: func() *substances.Catalogue { return nil }})
	_, err := cons.PlanQuotas(context.Background(), ledger.QuotaPlanRequest{AnnexGroup: "C/I", Year: 1979,
		ReferenceYears: []int{2024, 2024}, Fraction: num("1.5"), Granularity: num("-1")})
	var ie *ledger.InvalidError
	if !errors.As(err, &ie) {
		t.Fatalf("%v; want an InvalidError", err)
	}
	var fields []string
	for _, v := range ie.Violations {
		fields = append(fields, v.Field)
	}
	if got := strings.Join(fields, ","); got != "year,reference_years[1],fraction_ratio,granularity_amount" {
		t.Errorf("fields %s; want year,reference_years[1],fraction_ratio,granularity_amount", got)
	}
	if _, err := cons.PlanQuotas(context.Background(), ledger.QuotaPlanRequest{AnnexGroup: "Z/IX"}); !errors.As(err, &ie) || ie.Violations[0].Field != "annex_group" {
		t.Errorf("bad scope: %v; want annex_group named", err)
	}
}
