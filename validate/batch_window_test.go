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

func TestMatchKeyIsTheOneReplayConflictRule(t *testing.T) {
	fp := func(s string) string { return s }
	cases := []struct {
		earlier []string
		fp      string
		want    KeyMatch
		at      int
	}{
		{nil, "a", KeyNew, -1},
		{[]string{"a"}, "a", KeyReplay, 0},
		{[]string{"a"}, "b", KeyConflict, 0},
		// A key corrected twice: a replay of the first version answers that version, a
		// replay of the newest the newest; other content conflicts with the newest.
		{[]string{"a", "b", "a"}, "a", KeyReplay, 2},
		{[]string{"a", "b", "c"}, "b", KeyReplay, 1},
		{[]string{"a", "b", "c"}, "d", KeyConflict, 2},
	}
	for _, c := range cases {
		m, at := MatchKey(c.earlier, fp, c.fp)
		if m != c.want || at != c.at {
			t.Errorf("MatchKey(%q, %q) = %v, %d; want %v, %d", c.earlier, c.fp, m, at, c.want, c.at)
		}
	}
	if f := KeyFinding(KeyReplay, 7); f.Code != CodeDupReplay || f.Severity != SeverityNotice {
		t.Errorf("KeyFinding(KeyReplay) = %s %v; want DUP_REPLAY notice", f.Code, f.Severity)
	}
	if f := KeyFinding(KeyConflict, 0); f.Code != CodeDupKeyConflict || f.Severity != SeverityError {
		t.Errorf("KeyFinding(KeyConflict) = %s %v; want DUP_KEY_CONFLICT error", f.Code, f.Severity)
	}
}
