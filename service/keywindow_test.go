package service

import "testing"

// The window keeps the most recent keys up to its size and forgets the oldest first;
// replacing an entry does not count as a new key.
func TestKeyWindow(t *testing.T) {
	w := newKeyWindow(2)
	a, b, c := w.hash([2]string{"XA-1", "k1"}), w.hash([2]string{"XA-1", "k2"}), w.hash([2]string{"XA-1", "k3"})
	if a == b || w.hash([2]string{"XA-1k", "1"}) == a {
		t.Fatal("different (company, key) pairs hash alike")
	}
	w.put(a, windowEntry{line: 1})
	w.put(b, windowEntry{line: 2})
	w.put(a, windowEntry{line: 1, recorded: true}) // replace: a stays, b stays
	if e, ok := w.get(a); !ok || !e.recorded {
		t.Fatalf("a after replacement: %+v %v", e, ok)
	}
	w.put(c, windowEntry{line: 3}) // full: forgets the oldest key, a
	if _, ok := w.get(a); ok {
		t.Fatal("the oldest key is still remembered in a full window")
	}
	for _, h := range []uint64{b, c} {
		if _, ok := w.get(h); !ok {
			t.Fatal("a recent key was forgotten")
		}
	}
	if len(w.m) != 2 {
		t.Fatalf("window holds %d keys, size 2", len(w.m))
	}
}
