package validate

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// minParallelRecords is the fewest records of one message CheckAll spreads over several
// goroutines; fewer are checked in line (handing them out would cost more than it saves).
const minParallelRecords = 16

// parallelChunk is how many consecutive records a goroutine of CheckAll takes at a time.
const parallelChunk = 8

// CheckAll checks the records of one message in order and writes their verdicts to out
// (len(out) == len(rs)): the verdicts are those of calling Check on each record in turn,
// by construction. The rules that do not depend on the stream's earlier records are pure,
// so they run for the records in parallel (up to GOMAXPROCS goroutines); then, in order,
// each record's quota is judged against what the earlier ones drew and its key against
// the keys seen (the same settling step Check uses), so the quota ledger and the key
// window are only touched by one goroutine.
func (b *Batch) CheckAll(rs []Record, out []Verdict) {
	workers := min(runtime.GOMAXPROCS(0), len(rs)/minParallelRecords)
	if workers < 2 {
		for i := range rs {
			out[i] = b.Check(&rs[i])
		}
		return
	}
	if cap(b.scratch) < len(rs) {
		b.scratch = make([]checker, len(rs))
	}
	cs := b.scratch[:len(rs)]
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				from := int(next.Add(parallelChunk)) - parallelChunk
				if from >= len(rs) {
					return
				}
				for i := from; i < min(from+parallelChunk, len(rs)); i++ {
					cs[i] = checker{env: b.env, r: &rs[i], seed: &b.seen.seed}
					cs[i].rules()
				}
			}
		}()
	}
	wg.Wait()
	for i := range cs {
		out[i] = b.settle(&cs[i])
		cs[i] = checker{} // drop the references to the record and its findings
	}
}
