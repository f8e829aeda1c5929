package ledger

import (
	"context"
	"sync"
)

// keyLookup gathers the stored-key lookups of concurrent unary checks into shared
// queries: a call whose lookup finds no query of its own kind running starts one at once
// with its keys; calls arriving while maxInFlight queries run wait for the next, which
// starts as soon as one finishes and carries every key queued meanwhile. Under load, one
// round trip answers many calls instead of each call holding a pooled connection for its
// own; alone, a call waits no longer than before.
//
// Exact and replica-safe as the query per call was: every query a call is answered from
// starts after the call queued its keys (a call never joins a query already running), so
// it sees every record committed before the call began, on whichever replica.
type keyLookup struct {
	reg         ShipmentRegister
	maxInFlight int

	mu       sync.Mutex
	inFlight int
	queued   []*keyWait
}

// keyWait is one call's keys and, once its query has run, the answer.
type keyWait struct {
	ctx  context.Context // the first queued call's context gives the query its values
	keys [][2]string
	got  map[[2]string][]StoredRef
	err  error
	done chan struct{}
}

// defaultLookupsInFlight is how many gathered lookup queries run at once: two, so that one
// is on its way while the answer of the other is read, and the pool keeps connections for
// everything else.
const defaultLookupsInFlight = 2

func newKeyLookup(reg ShipmentRegister, maxInFlight int) *keyLookup {
	if maxInFlight <= 0 {
		maxInFlight = defaultLookupsInFlight
	}
	return &keyLookup{reg: reg, maxInFlight: maxInFlight}
}

// StoredRecords is ShipmentRegister.StoredRecords through the gathering: it returns the
// stored versions of keys, found by a query that started after this call.
func (l *keyLookup) StoredRecords(ctx context.Context, keys [][2]string) (map[[2]string][]StoredRef, error) {
	w := &keyWait{ctx: ctx, keys: keys, done: make(chan struct{})}
	l.mu.Lock()
	l.queued = append(l.queued, w)
	var batch []*keyWait
	if l.inFlight < l.maxInFlight {
		batch, l.queued = l.queued, nil
		l.inFlight++
	}
	l.mu.Unlock()
	if batch != nil {
		l.run(batch) // in this goroutine: alone, a call costs what it did before
	}
	select {
	case <-w.done:
		return w.got, w.err
	case <-ctx.Done():
		return nil, ctx.Err()
	}
}

// run answers a batch with one query, then hands the calls queued meanwhile, if any, to a
// goroutine that answers them as the next batch and goes on while calls keep queuing (the
// caller that ran this one returns now).
func (l *keyLookup) run(batch []*keyWait) {
	l.answer(batch)
	if next := l.next(); next != nil {
		go l.drain(next)
	}
}

// drain answers batch, then each batch queued while the one before ran, until none is:
// one goroutine for a run of batches rather than one each. Every batch is taken after
// its calls queued, and its query starts after it is taken.
func (l *keyLookup) drain(batch []*keyWait) {
	for batch != nil {
		l.answer(batch)
		batch = l.next()
	}
}

// next takes, for a query slot that has just come free, the calls queued meanwhile as the
// next batch; with none queued, it gives the slot up and returns nil.
func (l *keyLookup) next() []*keyWait {
	l.mu.Lock()
	defer l.mu.Unlock()
	next := l.queued
	l.queued = nil
	if len(next) == 0 {
		l.inFlight--
		return nil
	}
	return next
}

// answer runs one query for the keys of every call of batch and hands each call its part.
// The query runs without the calls' cancellation (a call that gives up must not fail the
// others it shares the query with); the store's statement timeout bounds it.
func (l *keyLookup) answer(batch []*keyWait) {
	var keys [][2]string
	if len(batch) == 1 {
		keys = batch[0].keys
	} else {
		seen := make(map[[2]string]struct{})
		for _, w := range batch {
			for _, k := range w.keys {
				if _, ok := seen[k]; !ok {
					seen[k] = struct{}{}
					keys = append(keys, k)
				}
			}
		}
	}
	got, err := l.reg.StoredRecords(context.WithoutCancel(batch[0].ctx), keys)
	for _, w := range batch {
		if err != nil {
			w.err = err
		} else if len(batch) == 1 {
			w.got = got
		} else {
			w.got = make(map[[2]string][]StoredRef, len(w.keys))
			for _, k := range w.keys {
				if vs, ok := got[k]; ok {
					w.got[k] = vs
				}
			}
		}
		close(w.done)
	}
}
