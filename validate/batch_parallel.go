package validate

import (
	"runtime"
	"strings"
	"sync"
)

// minParallelRecords is the fewest records of one message CheckAll spreads over several
// goroutines; fewer are checked in line (handing them out would cost more than it saves).
const minParallelRecords = 16

// CheckAll checks the records of one message in order and writes their verdicts to out
// (len(out) == len(rs)): the verdicts are exactly those of calling Check on each record in
// turn. The rules are pure, so the records are first checked in parallel (up to
// GOMAXPROCS goroutines) against the quota as the message found it; then, in order, each
// verdict is kept unless the record read a quota line an earlier record of the message
// drew on, or its key came before: those records are checked again in line against the
// quota and keys as they stand, as Check would. The quota ledger and the key window are
// only touched in the sequential pass.
func (b *Batch) CheckAll(rs []Record, out []Verdict) {
	workers := min(runtime.GOMAXPROCS(0), len(rs)/minParallelRecords)
	if workers < 2 {
		for i := range rs {
			out[i] = b.Check(&rs[i])
		}
		return
	}
	views := make([]readView, len(rs))
	var wg sync.WaitGroup
	next := 0
	var mu sync.Mutex
	const chunk = 8
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				mu.Lock()
				from := next
				next += chunk
				mu.Unlock()
				if from >= len(rs) {
					return
				}
				for i := from; i < min(from+chunk, len(rs)); i++ {
					views[i].base = b.ledger
					out[i] = Check(b.env, &rs[i], &views[i])
				}
			}
		}()
	}
	wg.Wait()

	var dirty map[lineRef]struct{} // lines drawn on by earlier records of this message
	for i := range rs {
		r := &rs[i]
		key := strings.TrimSpace(r.Key)
		var k uint64
		if key != "" {
			k = b.seen.Hash(strings.TrimSpace(r.CompanyID), key)
			if _, dup := b.seen.Get(k); dup {
				out[i] = b.Check(r)
				continue
			}
		}
		stale := false
		for _, ref := range views[i].reads {
			if _, ok := dirty[ref]; ok {
				stale = true
				break
			}
		}
		if stale {
			out[i] = Check(b.env, r, b.ledger) // draws on the ledger itself
		} else if out[i].Outcome != OutcomeRejected {
			for _, d := range out[i].Draws {
				b.ledger.Draw(d.LicenceNumber, d.LineNumber, d.Amount)
			}
		}
		if out[i].Outcome != OutcomeRejected && len(out[i].Draws) > 0 {
			if dirty == nil {
				dirty = map[lineRef]struct{}{}
			}
			for _, d := range out[i].Draws {
				dirty[lineRef{d.LicenceNumber, d.LineNumber}] = struct{}{}
			}
		}
		if key != "" {
			b.seen.Put(k, seenRecord{fingerprint: b.seen.HashString(out[i].Fingerprint), line: r.Line})
		}
	}
}

// readView is the quota ledger as a message found it, for one record checked in
// parallel: it reads the batch's ledger (nobody writes it meanwhile), notes which lines
// the record read, and keeps no draw (the sequential pass applies them).
type readView struct {
	base  *MemoryLedger
	reads []lineRef
}

func (v *readView) Drawn(licence string, line int) float64 {
	v.reads = append(v.reads, lineRef{licence, line})
	return v.base.Drawn(licence, line)
}

func (v *readView) Draw(string, int, float64) {}
