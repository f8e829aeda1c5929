package validate

import "hash/maphash"

// KeyWindow remembers the most recent distinct keys of a stream, as 64-bit hashes, with
// a small value each, forgetting the oldest once full: a stream's memory stays bounded
// however long it runs. It is not safe for concurrent use.
type KeyWindow[V any] struct {
	seed maphash.Seed
	m    map[uint64]V
	ring []uint64
	next int
	size int
}

// NewKeyWindow returns an empty window of the given size (at least 1).
func NewKeyWindow[V any](size int) *KeyWindow[V] {
	return &KeyWindow[V]{seed: maphash.MakeSeed(), m: make(map[uint64]V), size: max(size, 1)}
}

// Hash hashes a (company, key) pair with the window's seed.
func (w *KeyWindow[V]) Hash(company, key string) uint64 {
	var h maphash.Hash
	h.SetSeed(w.seed)
	h.WriteString(company)
	h.WriteByte(0)
	h.WriteString(key)
	return h.Sum64()
}

// HashString hashes any text (a fingerprint) with the window's seed.
func (w *KeyWindow[V]) HashString(s string) uint64 { return maphash.String(w.seed, s) }

// Get returns the value kept for a key hash.
func (w *KeyWindow[V]) Get(h uint64) (V, bool) {
	v, ok := w.m[h]
	return v, ok
}

// Put adds or replaces a key's value; a new key that does not fit pushes out the oldest.
func (w *KeyWindow[V]) Put(h uint64, v V) {
	if _, ok := w.m[h]; !ok {
		if len(w.ring) < w.size {
			w.ring = append(w.ring, h)
		} else {
			delete(w.m, w.ring[w.next])
			w.ring[w.next] = h
			w.next = (w.next + 1) % w.size
		}
	}
	w.m[h] = v
}

// Len is the number of keys kept.
func (w *KeyWindow[V]) Len() int { return len(w.m) }
