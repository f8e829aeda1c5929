package validate

import (
	"fmt"
	"testing"
)

// The duplicate window forgets the oldest keys once full, so a stream's memory stays
// bounded; within the window replays and conflicts are still told apart.
func TestBatchDuplicateWindow(t *testing.T) {
	env := testEnv(t)
	b := newBatch(env, 3)
	rec := func(key, qty string) *Record {
		r := baseRecord() // invented record, see fixtures_test.go
		r.Key, r.TotalQuantity = key, qty
		return &r
	}
	for i := 0; i < 3; i++ {
		b.Check(rec(fmt.Sprintf("K%d", i), "10"))
	}
	if v := b.Check(rec("K2", "10")); !v.Replayed || !has(v, CodeDupReplay) {
		t.Fatalf("K2 again within the window: %+v; want a replay", v.Findings)
	}
	if v := b.Check(rec("K1", "11")); !has(v, CodeDupKeyConflict) {
		t.Fatalf("K1 with other content within the window: %+v; want a conflict", v.Findings)
	}
	b.Check(rec("K3", "10")) // pushes K0 out
	if v := b.Check(rec("K0", "10")); v.Replayed || has(v, CodeDupReplay) {
		t.Fatalf("K0 after it left the window: %+v; want it checked as new", v.Findings)
	}
	if b.seen.Len() != 3 {
		t.Fatalf("window holds %d keys; want 3", b.seen.Len())
	}
}

func has(v Verdict, code string) bool {
	_, ok := codesOf(v)[code]
	return ok
}
