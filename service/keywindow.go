package service

import "hash/maphash"

// keyWindow remembers the most recent distinct keys of a stream (as 64-bit hashes) with a
// small entry each, forgetting the oldest once full, so that a stream's memory stays
// bounded however long it runs. It is not safe for concurrent use.
type keyWindow struct {
	seed maphash.Seed
	m    map[uint64]windowEntry
	ring []uint64
	next int
	size int
}

// windowEntry is what a window keeps per key; each user fills the fields it needs.
type windowEntry struct {
	fingerprint uint64 // hash of the record's content fingerprint
	line        int64  // the record's source line
	recorded    bool   // the record was stored
}

func newKeyWindow(size int) *keyWindow {
	return &keyWindow{seed: maphash.MakeSeed(), m: make(map[uint64]windowEntry), size: size}
}

// hash hashes a (company, key) pair.
func (w *keyWindow) hash(k [2]string) uint64 {
	var h maphash.Hash
	h.SetSeed(w.seed)
	h.WriteString(k[0])
	h.WriteByte(0)
	h.WriteString(k[1])
	return h.Sum64()
}

func (w *keyWindow) hashString(s string) uint64 { return maphash.String(w.seed, s) }

func (w *keyWindow) get(h uint64) (windowEntry, bool) {
	e, ok := w.m[h]
	return e, ok
}

// put adds or replaces an entry, forgetting the oldest key when a new one does not fit.
func (w *keyWindow) put(h uint64, e windowEntry) {
	if _, ok := w.m[h]; !ok {
		if len(w.ring) < w.size {
			w.ring = append(w.ring, h)
		} else {
			delete(w.m, w.ring[w.next])
			w.ring[w.next] = h
			w.next = (w.next + 1) % w.size
		}
	}
	w.m[h] = e
}
