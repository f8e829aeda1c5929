package store_test

import (
	"context"
	"errors"
	"fmt"
	"sync"
	"testing"
	"time"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

func TestMain(m *testing.M) { pgtest.Main(m) }

func migrate(ctx context.Context, url string) error {
	_, err := store.Migrate(ctx, url)
	return err
}

// openTestStore gives the test its own freshly migrated database.
func openTestStore(t *testing.T) (*store.Store, string) {
	t.Helper()
	url := pgtest.NewDatabase(t, "halovet_store", migrate)
	ctx := context.Background()
	st, err := store.Open(ctx, url)
	if err != nil {
		t.Fatalf("open: %v", err)
	}
	t.Cleanup(st.Close)
	return st, url
}

func TestSchemaAtHeadAndMigrateIdempotent(t *testing.T) {
	st, url := openTestStore(t)
	ctx := context.Background()
	cur, head, err := st.SchemaVersion(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if cur != head || head < 1 {
		t.Fatalf("schema version %d, head %d: a migrated database must be at head", cur, head)
	}
	v, err := store.Migrate(ctx, url)
	if err != nil || v != head {
		t.Fatalf("second migrate: version %d err %v; want %d and no error", v, err, head)
	}
}

func TestAuditLogIsAppendOnly(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	if err := st.PutCompany(ctx, store.Company{CompanyID: "XA-1", Name: "Invented Co"}); err != nil {
		t.Fatal(err)
	}
	var n int
	if err := st.Pool().QueryRow(ctx, `SELECT count(*) FROM audit_log WHERE entity = 'company' AND entity_key = 'XA-1'`).Scan(&n); err != nil || n != 1 {
		t.Fatalf("audit rows for the company: %d (err %v), want 1", n, err)
	}
	if _, err := st.Pool().Exec(ctx, `UPDATE audit_log SET actor = 'someone else'`); err == nil {
		t.Fatal("UPDATE on audit_log succeeded; the log must be append-only")
	}
	if _, err := st.Pool().Exec(ctx, `DELETE FROM audit_log`); err == nil {
		t.Fatal("DELETE on audit_log succeeded; the log must be append-only")
	}
}

// Invented demo-style data: company XA-1 with an import licence.
func issueTestLicence(t *testing.T, st *store.Store, number string, allocated float64) {
	t.Helper()
	ctx := context.Background()
	if err := st.PutCompany(ctx, store.Company{CompanyID: "XA-1", Name: "Invented Co"}); err != nil {
		t.Fatal(err)
	}
	l := store.Licence{Number: number, CompanyID: "XA-1", Directions: []terms.Direction{terms.DirectionImport},
		ValidFrom: time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC), ValidTo: time.Date(2026, 12, 31, 0, 0, 0, 0, time.UTC),
		Status: terms.LicenceActive, QuotaLines: []store.QuotaLine{{LineNumber: 1, AnnexGroup: string(substances.GroupCI), Unit: terms.QuotaODPTonnes, Allocated: exact.OfFloat(allocated)}}}
	if err := st.IssueLicence(ctx, l, "test licence"); err != nil {
		t.Fatal(err)
	}
}

func row(key string, odpNano store.Nano) store.ShipmentRow {
	return store.ShipmentRow{CompanyID: "XA-1", RecordKey: key, Fingerprint: "fp-" + key, Direction: terms.DirectionImport,
		LicenceNumber: "L-1", PartnerCountry: "XB", DeclarationDate: time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC),
		ResolvedDesignation: "HCFC-22", EntryKind: "substance", NetMassKg: odpNano, ODPTonnes: odpNano,
		CountsInConsumption: true, RecordJSON: []byte(`{}`),
		Components: []store.ShipmentComponent{{Designation: "HCFC-22", AnnexGroup: "C/I", ODPTonnes: odpNano}},
		Draws:      []store.Draw{{LicenceNumber: "L-1", LineNumber: 1, Amount: odpNano}}}
}

// amendErr and statusErr keep the error of a call that also returns a value.
func amendErr(_ bool, err error) error    { return err }
func statusErr(_ string, err error) error { return err }

func TestLicenceAmendAndStatusRules(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1.0)
	if err := st.IssueLicence(ctx, store.Licence{Number: "L-1", CompanyID: "XA-1", Directions: []terms.Direction{terms.DirectionImport},
		ValidFrom: time.Now(), ValidTo: time.Now(), Status: terms.LicenceActive}, ""); !errors.Is(err, store.ErrAlreadyExists) {
		t.Fatalf("issuing L-1 twice: err %v, want ErrAlreadyExists", err)
	}
	res, err := st.RecordShipments(ctx, []store.ShipmentRow{row("k1", store.ToNano(0.6))})
	if err != nil || res[0].Status != store.RecordStored {
		t.Fatalf("record: %+v, %v", res, err)
	}
	l, err := st.GetLicence(ctx, "L-1")
	if err != nil {
		t.Fatal(err)
	}
	l.QuotaLines[0].Allocated = num("0.5") // below the 0.6 drawn
	if err := amendErr(st.AmendLicence(ctx, store.Amendment{Licence: l, EffectiveOn: time.Now(), Reason: "cut"})); !errors.Is(err, store.ErrConflict) {
		t.Fatalf("amending below drawn: err %v, want ErrConflict", err)
	}
	l.QuotaLines[0].Allocated = num("2")
	if err := amendErr(st.AmendLicence(ctx, store.Amendment{Licence: l, EffectiveOn: time.Now(), Reason: "raise"})); err != nil {
		t.Fatalf("raising the allocation: %v", err)
	}
	if err := statusErr(st.SetLicenceStatus(ctx, store.StatusChange{Number: "L-1", Status: terms.LicenceRevoked,
		EffectiveOn: time.Date(2026, 2, 1, 0, 0, 0, 0, time.UTC), Reason: "x"})); err != nil {
		t.Fatal(err)
	}
	if err := statusErr(st.SetLicenceStatus(ctx, store.StatusChange{Number: "L-1", Status: terms.LicenceActive, EffectiveOn: time.Now(), Reason: "x"})); !errors.Is(err, store.ErrConflict) {
		t.Fatalf("reinstating a revoked licence: err %v, want ErrConflict", err)
	}
	// Declared 2026-03-01, after the revocation of 2026-02-01.
	res, err = st.RecordShipments(ctx, []store.ShipmentRow{row("k2", store.ToNano(0.1))})
	if err != nil || res[0].Status != store.RecordLicenceInactive {
		t.Fatalf("recording on a revoked licence: %+v %v, want RecordLicenceInactive", res, err)
	}
	if err := statusErr(st.SetLicenceStatus(ctx, store.StatusChange{Number: "NOPE", Status: terms.LicenceActive, EffectiveOn: time.Now(), Reason: "x"})); !errors.Is(err, store.ErrNotFound) {
		t.Fatalf("unknown licence: err %v, want ErrNotFound", err)
	}
}

func TestRecordShipmentsOutcomes(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1.0)
	conflict := row("a", store.ToNano(0.2))
	conflict.Fingerprint = "other content"
	rows := []store.ShipmentRow{
		row("a", store.ToNano(0.4)), // stored
		row("b", store.ToNano(0.7)), // 0.6 left: short
		row("a", store.ToNano(0.4)), // same key, same content in the same batch: replay
		conflict,                    // same key, other content: conflict
		row("c", store.ToNano(0.6)), // exactly what is left: stored
	}
	res, err := st.RecordShipments(ctx, rows)
	if err != nil {
		t.Fatal(err)
	}
	want := []store.RecordStatus{store.RecordStored, store.RecordQuotaShort, store.RecordReplayed, store.RecordKeyConflict, store.RecordStored}
	for i, w := range want {
		if res[i].Status != w {
			t.Errorf("row %d: status %v, want %v", i, res[i].Status, w)
		}
	}
	if res[1].Remaining != store.ToNano(0.6) {
		t.Errorf("short row: remaining %v, want 0.6 ODP t", res[1].Remaining.Float())
	}
	// A retried batch never double-counts.
	again, err := st.RecordShipments(ctx, []store.ShipmentRow{row("a", store.ToNano(0.4)), row("c", store.ToNano(0.6))})
	if err != nil {
		t.Fatal(err)
	}
	if again[0].Status != store.RecordReplayed || again[1].Status != store.RecordReplayed || again[0].ShipmentID != res[0].ShipmentID {
		t.Fatalf("retry: %+v, want both replayed with the first ids", again)
	}
	l, _ := st.GetLicence(ctx, "L-1")
	if got := l.QuotaLines[0].Drawn; !got.Equal(num("1.0")) {
		t.Fatalf("drawn %v, want exactly 1.0 ODP t (0.4 + 0.6)", got)
	}
}

// Many concurrent single-record batches against one quota line that admits exactly
// `admit` of them: exactly that many are stored and drawn equals their sum.
func TestRecordShipmentsConcurrentNeverOverdraws(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	const each, admit, tries = 0.0275, 40, 120 // invented amounts: 40 × 0.0275 = 1.1 ODP t
	issueTestLicence(t, st, "L-1", each*admit)
	var wg sync.WaitGroup
	var mu sync.Mutex
	stored := 0
	errs := make(chan error, tries)
	for i := 0; i < tries; i++ {
		wg.Add(1)
		go func(i int) {
			defer wg.Done()
			res, err := st.RecordShipments(ctx, []store.ShipmentRow{row(fmt.Sprintf("k%03d", i), store.ToNano(each))})
			if err != nil {
				errs <- err
				return
			}
			if res[0].Status == store.RecordStored {
				mu.Lock()
				stored++
				mu.Unlock()
			}
		}(i)
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Fatalf("concurrent record: %v", err)
	}
	if stored != admit {
		t.Fatalf("%d stored, want exactly %d", stored, admit)
	}
	var drawn, sum string
	if err := st.Pool().QueryRow(ctx, `SELECT drawn::text, (SELECT sum(odp_tonnes)::text FROM shipments) FROM quota_lines`).Scan(&drawn, &sum); err != nil {
		t.Fatal(err)
	}
	if drawn != sum || drawn != "1.100000000" {
		t.Fatalf("drawn %s, recorded ODP t %s; want both exactly 1.100000000", drawn, sum)
	}
}

// A row judged on one version of its licence is not written once the licence has been
// changed (here its quota line moved from Annex C/I to A/I): a replica that judged before it
// heard of the amendment must not draw on terms it did not judge against.
func TestRecordRefusesARowJudgedOnAnOlderLicenceVersion(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1.0)
	lic, err := st.GetLicence(ctx, "L-1")
	if err != nil {
		t.Fatal(err)
	}
	judged := lic.Version
	first := row("a", store.ToNano(0.1))
	first.LicenceVersion = judged
	if res, err := st.RecordShipments(ctx, []store.ShipmentRow{first}); err != nil || res[0].Status != store.RecordStored {
		t.Fatalf("row judged on the current version: %+v %v; want stored", res, err)
	}
	amended := lic
	// Line 1 has a draw now, so its scope cannot change: the amendment adds a CFC line.
	amended.QuotaLines = append(lic.QuotaLines, store.QuotaLine{LineNumber: 2, AnnexGroup: string(substances.GroupAI), Unit: terms.QuotaODPTonnes, Allocated: num("1.0")})
	if changed, err := st.AmendLicence(ctx, store.Amendment{Licence: amended, EffectiveOn: time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC), Reason: "a CFC line added"}); err != nil || !changed {
		t.Fatalf("amend: %v %v", changed, err)
	}
	stale := row("b", store.ToNano(0.1))
	stale.LicenceVersion = judged
	res, err := st.RecordShipments(ctx, []store.ShipmentRow{stale})
	if err != nil || res[0].Status != store.RecordLicenceChanged || res[0].LicenceNumber != "L-1" {
		t.Fatalf("row judged on version %d after an amendment: %+v %v; want RecordLicenceChanged for L-1", judged, res, err)
	}
	if got, _ := st.GetLicence(ctx, "L-1"); !got.QuotaLines[0].Drawn.Equal(num("0.1")) {
		t.Errorf("line 1 drawn %v after the refused row; want 0.1 (only the first row)", got.QuotaLines[0].Drawn)
	}
	now, _ := st.GetLicence(ctx, "L-1")
	stale.LicenceVersion = now.Version
	if res, err := st.RecordShipments(ctx, []store.ShipmentRow{stale}); err != nil || res[0].Status != store.RecordStored {
		t.Fatalf("the same row judged on version %d: %+v %v; want stored", now.Version, res, err)
	}
	// A row that names no version (0: judged without a licence) is not held to one.
	free := row("c", store.ToNano(0.1))
	if res, err := st.RecordShipments(ctx, []store.ShipmentRow{free}); err != nil || res[0].Status != store.RecordStored {
		t.Fatalf("row without a judged version: %+v %v; want stored", res, err)
	}
}
