package store_test

import (
	"context"
	"errors"
	"strings"
	"testing"
	"time"

	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/terms"
)

func date(y int, m time.Month, d int) time.Time { return time.Date(y, m, d, 0, 0, 0, 0, time.UTC) }

// rowOn is row declared on day d.
func rowOn(key string, odpNano store.Nano, d time.Time) store.ShipmentRow {
	r := row(key, odpNano)
	r.DeclarationDate = d
	return r
}

// auditCount counts the audit log entries of a licence.
func auditCount(t *testing.T, st *store.Store, number string) int {
	t.Helper()
	var n int
	if err := st.Pool().QueryRow(context.Background(), `SELECT count(*) FROM audit_log WHERE entity = 'licence' AND entity_key = $1`, number).Scan(&n); err != nil {
		t.Fatal(err)
	}
	return n
}

// A suspension dated 2026-09-15 refuses a declaration of 2026-09-16 and accepts one of
// 2026-06-18 (the acceptance of issue 10; the dates are the issue's own, the licence is
// invented); the reinstatement from 2026-10-01 accepts 2026-10-02 again.
func TestRecorderJudgesTheLicenceAsOfTheDeclarationDate(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 10)
	kind, err := st.SetLicenceStatus(ctx, store.StatusChange{Number: "L-1", Status: terms.LicenceSuspended, EffectiveOn: date(2026, 9, 15), Reason: "inspection"})
	if err != nil || kind != "suspended" {
		t.Fatalf("suspend: %q %v", kind, err)
	}
	res, err := st.RecordShipments(ctx, []store.ShipmentRow{
		rowOn("after", store.ToNano(0.1), date(2026, 9, 16)),
		rowOn("before", store.ToNano(0.1), date(2026, 6, 18)),
		rowOn("on-the-day", store.ToNano(0.1), date(2026, 9, 15)),
	})
	if err != nil {
		t.Fatal(err)
	}
	want := []store.RecordStatus{store.RecordLicenceInactive, store.RecordStored, store.RecordLicenceInactive}
	for i, w := range want {
		if res[i].Status != w {
			t.Errorf("row %d: status %v, want %v (%+v)", i, res[i].Status, w, res[i])
		}
	}
	kind, err = st.SetLicenceStatus(ctx, store.StatusChange{Number: "L-1", Status: terms.LicenceActive, EffectiveOn: date(2026, 10, 1), Reason: "inspection passed"})
	if err != nil || kind != "reinstated" {
		t.Fatalf("reinstate: %q %v", kind, err)
	}
	res, err = st.RecordShipments(ctx, []store.ShipmentRow{
		rowOn("late", store.ToNano(0.1), date(2026, 10, 2)),
		rowOn("during", store.ToNano(0.1), date(2026, 9, 20)),
	})
	if err != nil || res[0].Status != store.RecordStored || res[1].Status != store.RecordLicenceInactive {
		t.Fatalf("after the reinstatement: %+v %v, want stored and inactive", res, err)
	}
	l, err := st.GetLicence(ctx, "L-1")
	if err != nil {
		t.Fatal(err)
	}
	if l.Status != terms.LicenceActive || l.StatusOn(date(2026, 9, 20)) != terms.LicenceSuspended || l.StatusOn(date(2026, 6, 1)) != terms.LicenceActive || l.Version != 3 {
		t.Fatalf("licence %+v: want active now, suspended on 2026-09-20, active on 2026-06-01, version 3", l)
	}
	h, err := st.LicenceHistory(ctx, "L-1")
	if err != nil {
		t.Fatal(err)
	}
	var kinds []string
	for _, e := range h {
		kinds = append(kinds, e.Kind+"@"+e.EffectiveOn.Format(time.DateOnly)+":"+e.Reason)
	}
	if got := strings.Join(kinds, " "); got != "issued@2026-01-01:test licence suspended@2026-09-15:inspection reinstated@2026-10-01:inspection passed" {
		t.Fatalf("history %s", got)
	}
}

// Refused status changes change nothing: no event, no audit entry, the version stays.
func TestStatusChangeRefusals(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 10)
	if _, err := st.SetLicenceStatus(ctx, store.StatusChange{Number: "L-1", Status: terms.LicenceSuspended, EffectiveOn: date(2026, 9, 15), Reason: "x"}); err != nil {
		t.Fatal(err)
	}
	audits := auditCount(t, st, "L-1")
	cases := []struct {
		name string
		c    store.StatusChange
		kind error
		text string
	}{
		{"unknown licence", store.StatusChange{Number: "NOPE", Status: terms.LicenceActive, EffectiveOn: date(2026, 10, 1)}, store.ErrNotFound, "NOPE"},
		{"suspending a suspended licence", store.StatusChange{Number: "L-1", Status: terms.LicenceSuspended, EffectiveOn: date(2026, 10, 1)}, store.ErrConflict, "only an active licence can be suspended"},
		{"dated before the last change", store.StatusChange{Number: "L-1", Status: terms.LicenceActive, EffectiveOn: date(2026, 9, 1)}, store.ErrConflict, "before its last status change"},
		{"stale version", store.StatusChange{Number: "L-1", Status: terms.LicenceActive, EffectiveOn: date(2026, 10, 1), ExpectedVersion: 1}, store.ErrConflict, "expected_version 1"},
		{"back to draft", store.StatusChange{Number: "L-1", Status: terms.LicenceDraft, EffectiveOn: date(2026, 10, 1)}, store.ErrConflict, "cannot be set to"},
	}
	for _, c := range cases {
		_, err := st.SetLicenceStatus(ctx, c.c)
		if !errors.Is(err, c.kind) || !strings.Contains(err.Error(), c.text) {
			t.Errorf("%s: err %v, want %v naming %q", c.name, err, c.kind, c.text)
		}
	}
	if _, err := st.SetLicenceStatus(ctx, store.StatusChange{Number: "L-1", Status: terms.LicenceRevoked, EffectiveOn: date(2026, 11, 1)}); err != nil {
		t.Fatal(err)
	}
	if _, err := st.SetLicenceStatus(ctx, store.StatusChange{Number: "L-1", Status: terms.LicenceActive, EffectiveOn: date(2026, 11, 2)}); !errors.Is(err, store.ErrConflict) {
		t.Errorf("reinstating a revoked licence: %v, want ErrConflict", err)
	}
	// A reinstatement of a licence that is not suspended (it is active).
	issueTestLicence(t, st, "L-2", 1)
	if _, err := st.SetLicenceStatus(ctx, store.StatusChange{Number: "L-2", Status: terms.LicenceActive, EffectiveOn: date(2026, 5, 1)}); !errors.Is(err, store.ErrConflict) ||
		!strings.Contains(err.Error(), "a reinstatement needs a suspended licence") {
		t.Errorf("reinstating an active licence: %v", err)
	}
	if got := auditCount(t, st, "L-1"); got != audits+1 {
		t.Errorf("audit entries of L-1: %d, want %d (the refusals wrote none, the revocation one)", got, audits+1)
	}
	l, _ := st.GetLicence(ctx, "L-2")
	if l.Version != 1 || len(l.StatusHistory) != 1 {
		t.Errorf("L-2 after a refused reinstatement: version %d, history %v; want 1 and one period", l.Version, l.StatusHistory)
	}
}

// A line with draws keeps its unit, scope and company: 40 t of HCFC-22 drawn on a line
// cannot become a line in CO2-eq t of Annex F (the issue's example, amounts invented);
// closing it and opening a new line works, and the closed line takes no more draws.
func TestAmendmentKeepsWhatPastDrawsMean(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1)
	if res, err := st.RecordShipments(ctx, []store.ShipmentRow{row("k1", store.ToNano(0.4))}); err != nil || res[0].Status != store.RecordStored {
		t.Fatalf("record: %+v %v", res, err)
	}
	if err := st.PutCompany(ctx, store.Company{CompanyID: "XA-2", Name: "Other invented Co"}); err != nil {
		t.Fatal(err)
	}
	l, _ := st.GetLicence(ctx, "L-1")
	audits := auditCount(t, st, "L-1")
	amend := func(edit func(*store.Licence), version int) (bool, error) {
		x := l
		x.QuotaLines = append([]store.QuotaLine(nil), l.QuotaLines...)
		edit(&x)
		return st.AmendLicence(ctx, store.Amendment{Licence: x, EffectiveOn: date(2026, 7, 1), Reason: "test", ExpectedVersion: version})
	}
	refusals := []struct {
		name string
		edit func(*store.Licence)
		text string
	}{
		{"unit", func(x *store.Licence) { x.QuotaLines[0].Unit = terms.QuotaCO2eTonnes }, "unit, scope and purposes stay odp-t C/I"},
		{"scope", func(x *store.Licence) { x.QuotaLines[0].AnnexGroup = "F/I" }, "close it (CloseQuotaLine)"},
		{"company", func(x *store.Licence) { x.CompanyID = "XA-2" }, "company_id stays XA-1"},
		{"removal", func(x *store.Licence) { x.QuotaLines = nil }, "cannot be removed"},
		{"below drawn", func(x *store.Licence) { x.QuotaLines[0].Allocated = num("0.3") }, "below the 0.4 already drawn"},
	}
	for _, r := range refusals {
		if _, err := amend(r.edit, 0); !errors.Is(err, store.ErrConflict) || !strings.Contains(err.Error(), r.text) {
			t.Errorf("%s: %v, want ErrConflict saying %q", r.name, err, r.text)
		}
	}
	if got := auditCount(t, st, "L-1"); got != audits {
		t.Fatalf("refused amendments wrote %d audit entries", got-audits)
	}
	if changed, err := amend(func(*store.Licence) {}, l.Version); err != nil || changed {
		t.Fatalf("an amendment that changes nothing: changed %v, err %v", changed, err)
	}
	if changed, err := amend(func(x *store.Licence) { x.QuotaLines[0].Allocated = num("2") }, l.Version); err != nil || !changed {
		t.Fatalf("raising the allocation: changed %v, err %v", changed, err)
	}
	if _, err := amend(func(x *store.Licence) { x.QuotaLines[0].Allocated = num("3") }, l.Version); !errors.Is(err, store.ErrStaleVersion) {
		t.Fatalf("amending the version read before the last amendment: %v, want ErrStaleVersion", err)
	}
	n, err := st.CloseQuotaLine(ctx, store.CloseLine{Number: "L-1", LineNumber: 1, EffectiveOn: date(2026, 8, 1), Reason: "converted to CO2-eq",
		Successor: &store.QuotaLine{AnnexGroup: "C/I", Unit: terms.QuotaCO2eTonnes, Allocated: num("500")}})
	if err != nil || n != 2 {
		t.Fatalf("close line 1: new line %d, %v", n, err)
	}
	l, _ = st.GetLicence(ctx, "L-1")
	if len(l.QuotaLines) != 2 || !l.QuotaLines[0].Allocated.Equal(num("0.4")) || !l.QuotaLines[0].Drawn.Equal(num("0.4")) || l.QuotaLines[0].Unit != terms.QuotaODPTonnes ||
		!l.QuotaLines[0].ClosedOn.Equal(date(2026, 8, 1)) || l.QuotaLines[1].Unit != terms.QuotaCO2eTonnes || !l.QuotaLines[1].Allocated.Equal(num("500")) {
		t.Fatalf("after closing: %+v", l.QuotaLines)
	}
	if res, err := st.RecordShipments(ctx, []store.ShipmentRow{row("k2", store.ToNano(0.01))}); err != nil || res[0].Status != store.RecordQuotaShort {
		t.Fatalf("a draw on the closed line: %+v %v, want RecordQuotaShort", res, err)
	}
	if _, err := st.CloseQuotaLine(ctx, store.CloseLine{Number: "L-1", LineNumber: 1, EffectiveOn: date(2026, 8, 2)}); !errors.Is(err, store.ErrConflict) {
		t.Errorf("closing a closed line: %v", err)
	}
	if _, err := st.CloseQuotaLine(ctx, store.CloseLine{Number: "L-1", LineNumber: 9, EffectiveOn: date(2026, 8, 2)}); !errors.Is(err, store.ErrNotFound) {
		t.Errorf("closing an unknown line: %v", err)
	}
	if _, err := amend(func(x *store.Licence) { x.QuotaLines = l.QuotaLines; x.QuotaLines[0].Allocated = num("5") }, 0); !errors.Is(err, store.ErrConflict) {
		t.Errorf("amending a closed line: %v", err)
	}
}

// PutParty never moves the reporting Party; SetReportingParty does, refused once
// shipments exist unless forced. Countries invented.
func TestReportingPartyIsSetApart(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	put := func(code string, reporting bool) error {
		return st.PutParty(ctx, store.Party{CountryCode: code, Name: "invented", PartyType: terms.PartyTypeArticle5, HFCGroup: terms.HFCGroupA5Group1, ReportingParty: reporting})
	}
	if err := put("XA", true); err != nil {
		t.Fatalf("first setup: %v", err)
	}
	if err := put("XB", true); !errors.Is(err, store.ErrConflict) || !strings.Contains(err.Error(), "the reporting Party is XA") {
		t.Fatalf("PutParty marking another country: %v", err)
	}
	if err := put("XA", false); !errors.Is(err, store.ErrConflict) {
		t.Fatalf("PutParty unmarking the reporting Party: %v", err)
	}
	if err := put("XB", false); err != nil {
		t.Fatal(err)
	}
	if _, err := st.SetReportingParty(ctx, store.ReportingPartyChange{CountryCode: "XQ"}); !errors.Is(err, store.ErrNotFound) {
		t.Fatalf("unknown country: %v", err)
	}
	issueTestLicence(t, st, "L-1", 1)
	if _, err := st.RecordShipments(ctx, []store.ShipmentRow{row("k1", store.ToNano(0.1))}); err != nil {
		t.Fatal(err)
	}
	if _, err := st.SetReportingParty(ctx, store.ReportingPartyChange{CountryCode: "XB"}); !errors.Is(err, store.ErrConflict) || !strings.Contains(err.Error(), "1 shipments") {
		t.Fatalf("with a shipment recorded, unforced: %v", err)
	}
	if p, _ := st.GetParty(ctx, "XA"); !p.ReportingParty {
		t.Fatal("a refused change moved the reporting Party")
	}
	changed, err := st.SetReportingParty(ctx, store.ReportingPartyChange{CountryCode: "XB", Force: true, Reason: "set up on the wrong country"})
	if err != nil || !changed {
		t.Fatalf("forced: %v %v", changed, err)
	}
	var reason string
	if err := st.Pool().QueryRow(ctx, `SELECT reason FROM audit_log WHERE action = 'set-reporting-party' AND entity_key = 'XB'`).Scan(&reason); err != nil || reason != "set up on the wrong country" {
		t.Fatalf("audit: %q %v", reason, err)
	}
	if a, _ := st.GetParty(ctx, "XA"); a.ReportingParty {
		t.Fatal("XA still reporting")
	}
	if changed, err := st.SetReportingParty(ctx, store.ReportingPartyChange{CountryCode: "XB"}); err != nil || changed {
		t.Fatalf("naming the reporting Party again: %v %v, want unchanged", changed, err)
	}
}

// A load is one transaction: when its last object is refused nothing is written; a dry
// run reports and writes nothing; a reinstatement through a load takes effect.
func TestLoadRegistryIsAtomic(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	lic := func(number string, status terms.LicenceStatus) store.LoadLicence {
		return store.LoadLicence{StatusEffectiveOn: date(2026, 9, 15), Licence: store.Licence{Number: number, CompanyID: "XA-1", Directions: []terms.Direction{terms.DirectionImport},
			ValidFrom: date(2026, 1, 1), ValidTo: date(2026, 12, 31), Status: status,
			QuotaLines: []store.QuotaLine{{LineNumber: 1, AnnexGroup: "C/I", Unit: terms.QuotaODPTonnes, Allocated: num("1")}}}}
	}
	load := store.Load{Today: date(2026, 12, 3), Reason: "test load",
		Parties:   []store.Party{{CountryCode: "XA", PartyType: terms.PartyTypeArticle5, HFCGroup: terms.HFCGroupA5Group1, ReportingParty: true}},
		Companies: []store.Company{{CompanyID: "XA-1", Name: "Invented Co"}},
		Licences:  []store.LoadLicence{lic("L-1", terms.LicenceSuspended), lic("L-2", terms.LicenceActive)}}
	bad := load
	bad.Licences = append(append([]store.LoadLicence(nil), load.Licences...), lic("L-3", terms.LicenceActive))
	bad.Licences[2].Licence.CompanyID = "NOBODY" // unknown company: the last object fails
	if _, err := st.LoadRegistry(ctx, bad); !errors.Is(err, store.ErrNotFound) || !strings.Contains(err.Error(), "licences[2] (L-3)") {
		t.Fatalf("load with a bad last object: %v", err)
	}
	var n int
	if err := st.Pool().QueryRow(ctx, `SELECT (SELECT count(*) FROM parties) + (SELECT count(*) FROM companies) + (SELECT count(*) FROM licences) + (SELECT count(*) FROM audit_log)`).Scan(&n); err != nil || n != 0 {
		t.Fatalf("after a refused load: %d rows (err %v), want 0", n, err)
	}
	dry := load
	dry.DryRun = true
	out, err := st.LoadRegistry(ctx, dry)
	if err != nil || len(out) != 4 || out[2].Result != "created" || len(out[2].Changes) != 1 || out[2].Changes[0] != "suspended from 2026-09-15" {
		t.Fatalf("dry run: %+v %v", out, err)
	}
	if _, err := st.GetLicence(ctx, "L-1"); !errors.Is(err, store.ErrNotFound) {
		t.Fatalf("a dry run wrote L-1: %v", err)
	}
	if out, err = st.LoadRegistry(ctx, load); err != nil || out[0].Result != "created" || out[3].Result != "created" {
		t.Fatalf("load: %+v %v", out, err)
	}
	if out, err = st.LoadRegistry(ctx, load); err != nil {
		t.Fatal(err)
	}
	for _, o := range out {
		if o.Result != "unchanged" {
			t.Errorf("second load of the same file: %s %s %s, want unchanged", o.Kind, o.Key, o.Result)
		}
	}
	again := load
	again.Licences = []store.LoadLicence{lic("L-1", terms.LicenceActive)}
	again.Licences[0].StatusEffectiveOn = date(2026, 10, 1)
	if out, err = st.LoadRegistry(ctx, again); err != nil || out[2].Result != "changed" || out[2].Changes[0] != "reinstated from 2026-10-01" {
		t.Fatalf("reinstating through a load: %+v %v", out, err)
	}
	l, _ := st.GetLicence(ctx, "L-1")
	if l.Status != terms.LicenceActive || l.StatusOn(date(2026, 9, 20)) != terms.LicenceSuspended || l.StatusOn(date(2026, 10, 2)) != terms.LicenceActive {
		t.Fatalf("after the reinstatement: %+v", l)
	}
	if res, err := st.RecordShipments(ctx, []store.ShipmentRow{rowOn("k1", store.ToNano(0.1), date(2026, 10, 5))}); err != nil || res[0].Status != store.RecordStored {
		t.Fatalf("recording after a reinstatement by load: %+v %v", res, err)
	}
}

// A status change without a date takes effect today, or on the licence's last status
// change when that is later: a licence issued for next year is suspended from its first day.
func TestUndatedStatusChangeDefaultsToToday(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1) // valid from 2026-01-01 (invented)
	if _, err := st.SetLicenceStatus(ctx, store.StatusChange{Number: "L-1", Status: terms.LicenceSuspended, Today: date(2026, 12, 3), Reason: "x"}); err != nil {
		t.Fatal(err)
	}
	if err := st.PutCompany(ctx, store.Company{CompanyID: "XA-1", Name: "Invented Co"}); err != nil {
		t.Fatal(err)
	}
	next := store.Licence{Number: "L-2027", CompanyID: "XA-1", Directions: []terms.Direction{terms.DirectionImport}, ValidFrom: date(2027, 1, 1), ValidTo: date(2027, 12, 31), Status: terms.LicenceActive}
	if err := st.IssueLicence(ctx, next, "next year"); err != nil {
		t.Fatal(err)
	}
	if _, err := st.SetLicenceStatus(ctx, store.StatusChange{Number: "L-2027", Status: terms.LicenceSuspended, Today: date(2026, 12, 3), Reason: "x"}); err != nil {
		t.Fatal(err)
	}
	for n, want := range map[string]time.Time{"L-1": date(2026, 12, 3), "L-2027": date(2027, 1, 1)} {
		l, err := st.GetLicence(ctx, n)
		if err != nil {
			t.Fatal(err)
		}
		if got := l.StatusHistory[len(l.StatusHistory)-1]; got.Status != terms.LicenceSuspended || !got.From.Equal(want) {
			t.Errorf("%s: last period %+v, want suspended from %s", n, got, want.Format(time.DateOnly))
		}
	}
}
