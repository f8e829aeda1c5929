package ledger_test

import (
	"context"
	"errors"
	"slices"
	"sync"
	"testing"
	"time"

	"github.com/halovet/halovet/ledger"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
	"github.com/halovet/halovet/validate"
)

// The register here is INVENTED (user-assigned codes XA and XB; no real country's status is
// implied): reporting Party XA (Article 5, HFC group 1), partner XB (non-Article 5), one
// company's import licence with an Annex C/I line in ODP tonnes. HCFC-22 is Annex C Group I
// with ODP 0.055 (Montreal Protocol Annex C), so 100 kg draw 0.0055 ODP t.

var (
	catOnce sync.Once
	cat     *substances.Catalogue
	catErr  error
)

func seedCatalogue(t *testing.T) *substances.Catalogue {
	t.Helper()
	catOnce.Do(func() {
		subs, blends, err := substances.Seed()
		if err != nil {
			catErr = err
			return
		}
		cat, catErr = substances.NewCatalogue(subs, blends)
	})
	if catErr != nil {
		t.Fatalf("seed catalogue: %v", catErr)
	}
	return cat
}

func day(s string) time.Time {
	d, err := time.Parse("2006-01-02", s)
	if err != nil {
		panic(err)
	}
	return d
}

// fakeRegister is a register in memory that counts what it is asked.
type fakeRegister struct {
	mu           sync.Mutex
	parties      []ledger.Party
	licences     map[string]validate.Licence
	partyReads   int
	licenceReads [][]string // the numbers asked for, nil for every licence
	failLicences error
}

func newFakeRegister() *fakeRegister {
	bound := map[substances.Group]time.Time{substances.GroupCI: day("2000-01-01")}
	return &fakeRegister{
		parties: []ledger.Party{
			{Code: "XA", Reporting: true, Settings: validate.PartySettings{Type: terms.PartyTypeArticle5, HFCGroup: terms.HFCGroupA5Group1, BoundFrom: bound, Known: true}},
			{Code: "XB", Settings: validate.PartySettings{Type: terms.PartyTypeNonArticle5, HFCGroup: terms.HFCGroupNonA5, BoundFrom: bound, Known: true}},
		},
		licences: map[string]validate.Licence{
			"XA-IMP-1": {Number: "XA-IMP-1", CompanyID: "XA-CO-1", Directions: []terms.Direction{terms.DirectionImport},
				ValidFrom: day("2026-01-01"), ValidTo: day("2026-12-31"), Status: terms.LicenceActive,
				QuotaLines: []validate.QuotaLine{{LineNumber: 1, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 1}}},
			"XA-IMP-2": {Number: "XA-IMP-2", CompanyID: "XA-CO-2", Directions: []terms.Direction{terms.DirectionImport},
				ValidFrom: day("2026-01-01"), ValidTo: day("2026-12-31"), Status: terms.LicenceActive,
				QuotaLines: []validate.QuotaLine{{LineNumber: 1, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 1}}},
		},
	}
}

func (f *fakeRegister) Parties(context.Context) ([]ledger.Party, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.partyReads++
	return slices.Clone(f.parties), nil
}

func (f *fakeRegister) Licences(_ context.Context, numbers []string) ([]validate.Licence, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.licenceReads = append(f.licenceReads, numbers)
	if f.failLicences != nil {
		return nil, f.failLicences
	}
	var out []validate.Licence
	for n, l := range f.licences {
		if numbers == nil || slices.Contains(numbers, n) {
			out = append(out, l)
		}
	}
	return out, nil
}

func (f *fakeRegister) update(fn func(f *fakeRegister)) {
	f.mu.Lock()
	defer f.mu.Unlock()
	fn(f)
}

func (f *fakeRegister) reads() (parties int, licences [][]string) {
	f.mu.Lock()
	defer f.mu.Unlock()
	return f.partyReads, slices.Clone(f.licenceReads)
}

func holder(t *testing.T, reg ledger.Register) *ledger.EnvHolder {
	c := seedCatalogue(t)
	return ledger.NewEnvHolder(reg, ledger.Options{Catalogue: func() *substances.Catalogue { return c },
		Now: func() time.Time { return day("2026-07-01") }, RetryDelay: 10 * time.Millisecond})
}

// hcfc22 is 100 kg of HCFC-22 imported from XB on licence XA-IMP-1 by XA-CO-1.
func hcfc22(key string) validate.Record {
	return validate.Record{Key: key, Direction: terms.DirectionImport, CompanyID: "XA-CO-1", LicenceNumber: "XA-IMP-1",
		PartnerCountry: "XB", DeclarationDate: "2026-06-15", Substance: "HCFC-22", TotalQuantity: "100", Unit: "kg"}
}

func codes(v validate.Verdict) []string {
	var out []string
	for _, f := range v.Findings {
		out = append(out, f.Code)
	}
	return out
}

func current(t *testing.T, h *ledger.EnvHolder) *validate.Env {
	t.Helper()
	env, err := h.Current(context.Background())
	if err != nil {
		t.Fatalf("Current: %v", err)
	}
	return env
}

func TestCurrentIsBuiltOnceAndShared(t *testing.T) {
	reg := newFakeRegister()
	h := holder(t, reg)
	a, b := current(t, h), current(t, h)
	if a != b {
		t.Errorf("two Current calls with no change gave two environments")
	}
	parties, lics := reg.reads()
	if parties != 1 || len(lics) != 1 || lics[0] != nil {
		t.Errorf("register read %d times for parties and %v for licences; want once each, every licence", parties, lics)
	}
	r := hcfc22("K-1")
	if v := validate.Check(a, &r, validate.NewMemoryLedger()); v.Outcome != validate.OutcomeAccepted {
		t.Errorf("HCFC-22 on an active licence: %v %v; want accepted", v.Outcome, codes(v))
	}
}

func TestRefreshReadsOnlyTheChangedLicence(t *testing.T) {
	reg := newFakeRegister()
	h := holder(t, reg)
	before := current(t, h)
	other, _ := before.Licence("XA-IMP-2")
	reg.update(func(f *fakeRegister) {
		l := f.licences["XA-IMP-1"]
		l.Status = terms.LicenceSuspended
		f.licences["XA-IMP-1"] = l
	})
	r := hcfc22("K-1")
	if v := validate.Check(current(t, h), &r, nil); v.Outcome != validate.OutcomeAccepted {
		t.Fatalf("before the change is announced the old environment stands: got %v %v", v.Outcome, codes(v))
	}
	if err := h.Refresh(context.Background(), ledger.Change{Licences: []string{"XA-IMP-1"}}); err != nil {
		t.Fatal(err)
	}
	after := current(t, h)
	v := validate.Check(after, &r, nil)
	if v.Outcome != validate.OutcomeRejected || !slices.Contains(codes(v), validate.CodeLicenceInactive) {
		t.Errorf("after the licence was suspended: %v %v; want rejected with %s", v.Outcome, codes(v), validate.CodeLicenceInactive)
	}
	parties, lics := reg.reads()
	if parties != 1 || len(lics) != 2 || !slices.Equal(lics[1], []string{"XA-IMP-1"}) {
		t.Errorf("reads: %d party, licences %v; want parties once, then only XA-IMP-1", parties, lics)
	}
	if l, _ := after.Licence("XA-IMP-2"); l != other {
		t.Errorf("the unchanged licence was rebuilt")
	}
	// The old environment, still held by a check in flight, is untouched.
	if l, _ := before.Licence("XA-IMP-1"); l.Status != terms.LicenceActive {
		t.Errorf("the earlier environment changed under its reader: status %v", l.Status)
	}
}

func TestRefreshDropsARemovedLicence(t *testing.T) {
	reg := newFakeRegister()
	h := holder(t, reg)
	current(t, h)
	reg.update(func(f *fakeRegister) { delete(f.licences, "XA-IMP-1") })
	if err := h.Refresh(context.Background(), ledger.Change{Licences: []string{"XA-IMP-1"}}); err != nil {
		t.Fatal(err)
	}
	r := hcfc22("K-1")
	if v := validate.Check(current(t, h), &r, nil); !slices.Contains(codes(v), validate.CodeLicenceUnknown) {
		t.Errorf("a licence no longer in the register: %v; want %s", codes(v), validate.CodeLicenceUnknown)
	}
}

// The balance drawn by recorded shipments is part of the snapshot: a draw announced for
// the licence is seen by the next check, and a check's own stream ledger adds to it.
func TestDrawnBalanceFollowsAnnouncements(t *testing.T) {
	reg := newFakeRegister()
	h := holder(t, reg)
	current(t, h)
	reg.update(func(f *fakeRegister) {
		l := f.licences["XA-IMP-1"]
		l.QuotaLines = []validate.QuotaLine{{LineNumber: 1, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 1, Drawn: 0.996}}
		f.licences["XA-IMP-1"] = l
	})
	if err := h.Refresh(context.Background(), ledger.Change{Licences: []string{"XA-IMP-1"}}); err != nil {
		t.Fatal(err)
	}
	r := hcfc22("K-1") // draws 0.0055 ODP t; 0.004 left
	v := validate.Check(current(t, h), &r, validate.NewMemoryLedger())
	if !slices.Contains(codes(v), validate.CodeQuotaExceeded) {
		t.Errorf("0.0055 ODP t against 0.004 left: %v; want %s", codes(v), validate.CodeQuotaExceeded)
	}
}

func TestNotConfiguredUntilAReportingPartyIsSet(t *testing.T) {
	reg := newFakeRegister()
	reg.parties[0].Reporting = false
	h := holder(t, reg)
	if _, err := h.Current(context.Background()); !errors.Is(err, ledger.ErrNotConfigured) {
		t.Fatalf("no reporting Party: err %v; want ErrNotConfigured", err)
	}
	reg.update(func(f *fakeRegister) { f.parties[0].Reporting = true })
	if err := h.Refresh(context.Background(), ledger.Change{Parties: true}); err != nil {
		t.Fatal(err)
	}
	if env := current(t, h); env.ReportingParty != "XA" {
		t.Errorf("reporting Party %q; want XA", env.ReportingParty)
	}
	_, lics := reg.reads()
	if len(lics) != 1 {
		t.Errorf("a party change re-read the licences: %v", lics)
	}
}

func TestNonPartyAsReportingPartyIsNotConfigured(t *testing.T) {
	reg := newFakeRegister()
	reg.parties[0].Settings.Type = terms.PartyTypeNonParty
	h := holder(t, reg)
	_, err := h.Current(context.Background())
	if !errors.Is(err, ledger.ErrNotConfigured) {
		t.Fatalf("reporting Party set as a non-party: err %v; want ErrNotConfigured", err)
	}
}

func TestFailedReloadKeepsThePreviousEnvironment(t *testing.T) {
	reg := newFakeRegister()
	h := holder(t, reg)
	before := current(t, h)
	down := errors.New("database down")
	reg.update(func(f *fakeRegister) { f.failLicences = down })
	if err := h.Refresh(context.Background(), ledger.Change{Licences: []string{"XA-IMP-1"}}); !errors.Is(err, down) {
		t.Fatalf("Refresh with the register down: %v; want its error", err)
	}
	if current(t, h) != before {
		t.Errorf("a failed reload replaced the environment")
	}
}

func TestANewCatalogueRebuildsWithoutReadingTheRegister(t *testing.T) {
	reg := newFakeRegister()
	c1 := seedCatalogue(t)
	subs, blends, err := substances.Seed()
	if err != nil {
		t.Fatal(err)
	}
	c2, err := substances.NewCatalogue(subs, blends)
	if err != nil {
		t.Fatal(err)
	}
	var cur *substances.Catalogue = c1
	var mu sync.Mutex
	h := ledger.NewEnvHolder(reg, ledger.Options{Catalogue: func() *substances.Catalogue { mu.Lock(); defer mu.Unlock(); return cur }})
	if env := current(t, h); env.Catalogue != c1 {
		t.Fatal("first environment not on the first catalogue")
	}
	mu.Lock()
	cur = c2
	mu.Unlock()
	if env := current(t, h); env.Catalogue != c2 {
		t.Errorf("after a catalogue swap the environment still holds the old catalogue")
	}
	parties, lics := reg.reads()
	if parties != 1 || len(lics) != 1 {
		t.Errorf("a catalogue swap re-read the register: %d, %v", parties, lics)
	}
}

// fakeNotifier delivers changes from a channel; closing drop makes the current Listen
// return as a lost connection does.
type fakeNotifier struct {
	changes chan ledger.Change
	mu      sync.Mutex
	drop    chan struct{}
	listens int
}

func (n *fakeNotifier) Listen(ctx context.Context, ready func(), changed func(ledger.Change)) error {
	n.mu.Lock()
	n.listens++
	drop := make(chan struct{})
	n.drop = drop
	n.mu.Unlock()
	ready()
	for {
		select {
		case <-ctx.Done():
			return ctx.Err()
		case <-drop:
			return errors.New("connection lost")
		case c := <-n.changes:
			changed(c)
		}
	}
}

func (n *fakeNotifier) dropConnection() {
	n.mu.Lock()
	defer n.mu.Unlock()
	close(n.drop)
	n.drop = make(chan struct{}) // closed once
}

// eventually waits up to 5 s for cond.
func eventually(t *testing.T, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(5 * time.Second)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("not within 5 s: %s", what)
		}
		time.Sleep(5 * time.Millisecond)
	}
}

func licenceStatus(t *testing.T, h *ledger.EnvHolder, n string) terms.LicenceStatus {
	l, ok := current(t, h).Licence(n)
	if !ok {
		return terms.LicenceStatusUnspecified
	}
	return l.Status
}

func TestWatchAppliesAnnouncementsAndReloadsOnReconnect(t *testing.T) {
	reg := newFakeRegister()
	h := holder(t, reg)
	current(t, h)
	n := &fakeNotifier{changes: make(chan ledger.Change)}
	stop := h.Watch(context.Background(), n)
	defer stop()

	// An announced change is applied.
	reg.update(func(f *fakeRegister) {
		l := f.licences["XA-IMP-1"]
		l.Status = terms.LicenceSuspended
		f.licences["XA-IMP-1"] = l
	})
	n.changes <- ledger.Change{Licences: []string{"XA-IMP-1"}}
	eventually(t, "the announced suspension is seen", func() bool { return licenceStatus(t, h, "XA-IMP-1") == terms.LicenceSuspended })

	// A change made while the connection is down is never announced; the reload on
	// reconnection brings it.
	n.mu.Lock()
	listensBefore := n.listens
	n.mu.Unlock()
	n.dropConnection()
	reg.update(func(f *fakeRegister) {
		l := f.licences["XA-IMP-2"]
		l.Status = terms.LicenceRevoked
		f.licences["XA-IMP-2"] = l
	})
	eventually(t, "the change missed while disconnected is seen after reconnecting", func() bool {
		return licenceStatus(t, h, "XA-IMP-2") == terms.LicenceRevoked
	})
	n.mu.Lock()
	if n.listens <= listensBefore {
		t.Errorf("Listen called %d times; want a new call after the drop", n.listens)
	}
	n.mu.Unlock()
}

func TestWatchRetriesAFailedReload(t *testing.T) {
	reg := newFakeRegister()
	h := holder(t, reg)
	current(t, h)
	n := &fakeNotifier{changes: make(chan ledger.Change)}
	stop := h.Watch(context.Background(), n)
	defer stop()
	reg.update(func(f *fakeRegister) {
		f.failLicences = errors.New("database down")
		l := f.licences["XA-IMP-1"]
		l.Status = terms.LicenceSuspended
		f.licences["XA-IMP-1"] = l
	})
	n.changes <- ledger.Change{Licences: []string{"XA-IMP-1"}}
	eventually(t, "a reload was tried and failed", func() bool { _, l := reg.reads(); return len(l) >= 3 })
	if licenceStatus(t, h, "XA-IMP-1") != terms.LicenceActive {
		t.Fatal("the environment changed although the reload failed")
	}
	reg.update(func(f *fakeRegister) { f.failLicences = nil })
	eventually(t, "the retried reload applies the change", func() bool { return licenceStatus(t, h, "XA-IMP-1") == terms.LicenceSuspended })
}

func TestNarrowedHidesOtherCompaniesLicences(t *testing.T) {
	h := holder(t, newFakeRegister())
	env := current(t, h)
	narrow := ledger.Narrowed(env, func(l *validate.Licence) bool { return l.CompanyID == "XA-CO-2" })
	r := hcfc22("K-1") // on XA-IMP-1, held by XA-CO-1
	if v := validate.Check(narrow, &r, nil); !slices.Contains(codes(v), validate.CodeLicenceUnknown) {
		t.Errorf("a licence outside the caller's companies: %v; want %s", codes(v), validate.CodeLicenceUnknown)
	}
	if _, ok := narrow.Licence("XA-IMP-2"); !ok {
		t.Error("the caller's own company's licence is hidden")
	}
	if v := validate.Check(env, &r, nil); v.Outcome != validate.OutcomeAccepted {
		t.Errorf("the shared environment changed: %v %v", v.Outcome, codes(v))
	}
}

// TestPinnedBalancesKeepTheFirstSeenDrawnAmount: a recording stream's view keeps the amount
// drawn as it first saw the licence (its own committed draws coming back through an
// announcement do not count twice), while the licence's terms follow the register.
// The figures are invented: 0.996 ODP t drawn of 1 allocated; HCFC-22 100 kg is 0.0055 ODP t
// (ODP 0.055, Montreal Protocol Annex C Group I).
func TestPinnedBalancesKeepTheFirstSeenDrawnAmount(t *testing.T) {
	reg := newFakeRegister()
	h := holder(t, reg)
	var pinned ledger.PinnedBalances
	r := hcfc22("K-1")
	if v := validate.Check(pinned.View(current(t, h), "XA-IMP-1"), &r, nil); slices.Contains(codes(v), validate.CodeQuotaExceeded) {
		t.Fatalf("first record against a fresh line: %v", codes(v))
	}
	// The stream's own draws (and others') come back as a higher balance, and the licence
	// is suspended at the same time.
	reg.update(func(f *fakeRegister) {
		l := f.licences["XA-IMP-1"]
		l.QuotaLines = []validate.QuotaLine{{LineNumber: 1, Group: substances.GroupCI, Unit: terms.QuotaODPTonnes, Allocated: 1, Drawn: 0.996}}
		l.Status = terms.LicenceSuspended
		f.licences["XA-IMP-1"] = l
	})
	if err := h.Refresh(context.Background(), ledger.Change{Licences: []string{"XA-IMP-1"}}); err != nil {
		t.Fatal(err)
	}
	live := current(t, h)
	view := pinned.View(live, "XA-IMP-1")
	l, ok := view.Licence("XA-IMP-1")
	if !ok || l.QuotaLines[0].Drawn != 0 || l.Status != terms.LicenceSuspended {
		t.Fatalf("view of XA-IMP-1: %+v, %v; want the first-seen balance 0 and the live status suspended", l, ok)
	}
	if ll, _ := live.Licence("XA-IMP-1"); ll.QuotaLines[0].Drawn != 0.996 {
		t.Errorf("the live environment changed: drawn %v; want 0.996", ll.QuotaLines[0].Drawn)
	}
	r = hcfc22("K-2")
	v := validate.Check(view, &r, nil)
	if slices.Contains(codes(v), validate.CodeQuotaExceeded) || !slices.Contains(codes(v), validate.CodeLicenceInactive) {
		t.Errorf("second record: %v; want %s (live terms) and no %s (pinned balance)", codes(v), validate.CodeLicenceInactive, validate.CodeQuotaExceeded)
	}
	// A licence first seen later is pinned as it is then.
	if l, _ := pinned.View(live, "XA-IMP-2").Licence("XA-IMP-2"); l == nil || l.Number != "XA-IMP-2" {
		t.Errorf("XA-IMP-2 not found through the view")
	}
}

// The environment and its snapshots carry each licence's dated status history: a
// suspension dated 2026-09-15, announced, rejects a declaration of 2026-09-16 and accepts
// one of 2026-06-18 (the dates), in the live environment and in a stream's view
// with pinned balances.
func TestEnvironmentCarriesTheDatedStatusHistory(t *testing.T) {
	reg := newFakeRegister()
	c := seedCatalogue(t)
	h := ledger.NewEnvHolder(reg, ledger.Options{Catalogue: func() *substances.Catalogue { return c },
		Now: func() time.Time { return day("2026-10-01") }, RetryDelay: 10 * time.Millisecond})
	// A stream opened before the suspension pins the licence's balances as they were.
	var pinned ledger.PinnedBalances
	pinned.View(current(t, h), "XA-IMP-1")
	reg.update(func(f *fakeRegister) {
		l := f.licences["XA-IMP-1"]
		l.Status = terms.LicenceSuspended
		l.StatusHistory = []validate.StatusPeriod{{From: day("2026-01-01"), Status: terms.LicenceActive},
			{From: day("2026-09-15"), Status: terms.LicenceSuspended}}
		f.licences["XA-IMP-1"] = l
	})
	if err := h.Refresh(context.Background(), ledger.Change{Licences: []string{"XA-IMP-1"}}); err != nil {
		t.Fatal(err)
	}
	live := current(t, h)
	for name, env := range map[string]*validate.Env{"live": live, "pinned": pinned.View(live, "XA-IMP-1")} {
		for date, rejected := range map[string]bool{"2026-09-16": true, "2026-09-15": true, "2026-06-18": false} {
			r := hcfc22("K-" + date)
			r.DeclarationDate = date
			v := validate.Check(env, &r, nil)
			if got := slices.Contains(codes(v), validate.CodeLicenceInactive); got != rejected {
				t.Errorf("%s environment, declared %s: codes %v; want %s %v", name, date, codes(v), validate.CodeLicenceInactive, rejected)
			}
		}
	}
}
