package validate

import (
	"reflect"
	"testing"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// TestShareIndexes: an environment rebuilt over the same catalogue uses the indexes the
// first one built, and judges records as the first does; over another catalogue it builds
// its own.
func TestShareIndexes(t *testing.T) {
	first := testEnv(t)
	r := baseRecord()
	r.Formula = "CCl2F2" // CFC-12's formula declared for HCFC-22: a formula mismatch
	want := Check(first, &r, NewMemoryLedger())
	if len(want.Findings) == 0 {
		t.Fatal("the mismatched formula gave no finding; the test would not tell indexes apart")
	}

	second := testEnv(t)
	second.ShareIndexes(first)
	if reflect.ValueOf(second.formulas).Pointer() != reflect.ValueOf(first.formulas).Pointer() ||
		reflect.ValueOf(second.hsCount).Pointer() != reflect.ValueOf(first.hsCount).Pointer() {
		t.Fatal("ShareIndexes over the same catalogue did not share the derived indexes")
	}
	got := Check(second, &r, NewMemoryLedger())
	if !reflect.DeepEqual(codesOf(got), codesOf(want)) {
		t.Errorf("shared indexes: findings %v; want %v", codesOf(got), codesOf(want))
	}

	subs, blends, err := substances.Seed()
	if err != nil {
		t.Fatal(err)
	}
	other, err := substances.NewCatalogue(subs, blends)
	if err != nil {
		t.Fatal(err)
	}
	third := testEnv(t)
	third.Catalogue = other
	third.ShareIndexes(first)
	third.prepare()
	if reflect.ValueOf(third.formulas).Pointer() == reflect.ValueOf(first.formulas).Pointer() {
		t.Error("ShareIndexes shared indexes across two catalogue snapshots")
	}
}

// TestBatchSetEnv: records after SetEnv are judged against the new environment while the
// quota drawn by earlier records of the stream carries over.
func TestBatchSetEnv(t *testing.T) {
	env := testEnv(t)
	b := NewBatch(env)
	r := baseRecord() // 136 kg HCFC-22 = 0.00748 ODP t (ODP 0.055, Montreal Protocol Annex C)
	if v := b.Check(&r); v.Outcome == OutcomeRejected {
		t.Fatalf("first record rejected: %v", codesOf(v))
	}
	drawn := b.Ledger().Drawn("XA-IMP-2025-001", 2)
	if drawn <= 0 {
		t.Fatalf("nothing drawn on the C/I line: %v", drawn)
	}
	lics := testLicences()
	lics["XA-IMP-2025-001"].Status = terms.LicenceSuspended
	next := testEnv(t)
	next.Licence = func(n string) (*Licence, bool) { l, ok := lics[n]; return l, ok }
	b.SetEnv(next)
	r2 := baseRecord()
	r2.Key = "K-2"
	v := b.Check(&r2)
	if _, ok := codesOf(v)[CodeLicenceInactive]; !ok {
		t.Errorf("after SetEnv with the licence suspended: %v; want %s", codesOf(v), CodeLicenceInactive)
	}
	if b.Ledger().Drawn("XA-IMP-2025-001", 2) != drawn {
		t.Errorf("the stream's quota ledger changed on SetEnv")
	}
}
