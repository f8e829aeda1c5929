package validate

import "testing"

// The window keeps the most recent keys up to its size and forgets the oldest first;
// replacing an entry does not count as a new key.
func TestKeyWindow(t *testing.T) {
	w := NewKeyWindow[int](2)
	a, b, c := w.Hash("XA-1", "k1"), w.Hash("XA-1", "k2"), w.Hash("XA-1", "k3")
	if a == b || w.Hash("XA-1k", "1") == a {
		t.Fatal("different (company, key) pairs hash alike")
	}
	w.Put(a, 1)
	w.Put(b, 2)
	w.Put(a, 10) // replace: a and b stay
	if v, ok := w.Get(a); !ok || v != 10 {
		t.Fatalf("a after replacement: %v %v; want 10", v, ok)
	}
	w.Put(c, 3) // full: forgets the oldest key, a
	if _, ok := w.Get(a); ok {
		t.Fatal("the oldest key is still remembered in a full window")
	}
	for _, h := range []uint64{b, c} {
		if _, ok := w.Get(h); !ok {
			t.Fatal("a recent key was forgotten")
		}
	}
	if w.Len() != 2 {
		t.Fatalf("window holds %d keys, size 2", w.Len())
	}
}
