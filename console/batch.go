package console

import (
	"context"
	"fmt"
	"io"
	"sort"
	"strconv"
	"sync"
	"sync/atomic"
	"time"

	"github.com/halovet/halovet/internal/shipstream"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/validate"
)

// A batch is one uploaded file checked (or recorded) through the streaming calls, kept in
// memory for its owner while the console runs: the most recent batches are kept, the
// oldest dropped.

const (
	maxBatchesKept  = 64
	maxBatchBytes   = 256 << 20 // files kept in memory, all batches together
	maxRunningOwn   = 2         // batches one credential may have running at once
	batchPerMessage = 500
	batchTimeout    = 15 * time.Minute
)

type batchKind int

const (
	batchCheck  batchKind = iota // CheckShipments: nothing stored
	batchRecord                  // RecordShipments: accepted records stored, quotas drawn
)

type batchRow struct {
	V          validate.Verdict
	Recorded   bool
	ShipmentID int64 // the recorded shipment, when the record is stored; 0 otherwise
}

type batch struct {
	ID       string
	Owner    string // credential ID
	Kind     batchKind
	FileName string
	Format   validate.Format
	data     []byte
	Started  time.Time

	read atomic.Int64 // bytes read of data
	done atomic.Int64 // records answered

	mu         sync.Mutex
	finished   bool
	Finished   time.Time
	Err        error
	Rows       []batchRow
	Summary    *validate.Summary
	Recorded   int64
	RecordedAs string // the ID of the recording batch made from this check
}

// snapshot is a consistent view of a batch for a page.
type batchSnapshot struct {
	*batch
	Done       bool
	ReadBytes  int64
	Answered   int64
	Rows       []batchRow
	Summary    *validate.Summary
	Err        error
	Recorded   int64
	RecordedAs string
}

func (b *batch) snapshot() batchSnapshot {
	b.mu.Lock()
	defer b.mu.Unlock()
	return batchSnapshot{batch: b, Done: b.finished, ReadBytes: b.read.Load(), Answered: b.done.Load(), Rows: b.Rows,
		Summary: b.Summary, Err: b.Err, Recorded: b.Recorded, RecordedAs: b.RecordedAs}
}

// Percent is how far the batch has been read.
func (s batchSnapshot) Percent() int {
	if len(s.data) == 0 {
		return 100
	}
	return int(100 * s.ReadBytes / int64(len(s.data)))
}

func (s batchSnapshot) IsRecord() bool { return s.Kind == batchRecord }

type batchStore struct {
	mu    sync.Mutex
	byID  map[string]*batch
	order []string
	next  int64
	now   func() time.Time
}

func newBatchStore(now func() time.Time) *batchStore {
	return &batchStore{byID: map[string]*batch{}, now: now}
}

func (s *batchStore) add(b *batch) {
	s.mu.Lock()
	defer s.mu.Unlock()
	s.next++
	b.ID = strconv.FormatInt(s.next, 10) + "-" + randomToken()[:10]
	b.Started = s.now()
	s.byID[b.ID] = b
	s.order = append(s.order, b.ID)
	total := 0
	for _, id := range s.order {
		total += len(s.byID[id].data)
	}
	for len(s.order) > 1 && (len(s.order) > maxBatchesKept || total > maxBatchBytes) {
		total -= len(s.byID[s.order[0]].data)
		delete(s.byID, s.order[0])
		s.order = s.order[1:]
	}
}

// running counts the owner's batches that have not finished.
func (s *batchStore) running(owner string) int {
	s.mu.Lock()
	bs := make([]*batch, 0, len(s.byID))
	for _, b := range s.byID {
		if b.Owner == owner {
			bs = append(bs, b)
		}
	}
	s.mu.Unlock()
	n := 0
	for _, b := range bs {
		b.mu.Lock()
		if !b.finished {
			n++
		}
		b.mu.Unlock()
	}
	return n
}

// get returns the batch if it belongs to owner.
func (s *batchStore) get(id, owner string) *batch {
	s.mu.Lock()
	defer s.mu.Unlock()
	b := s.byID[id]
	if b == nil || b.Owner != owner {
		return nil
	}
	return b
}

// list returns the owner's batches, newest first.
func (s *batchStore) list(owner string) []batchSnapshot {
	s.mu.Lock()
	var bs []*batch
	for i := len(s.order) - 1; i >= 0; i-- {
		if b := s.byID[s.order[i]]; b.Owner == owner {
			bs = append(bs, b)
		}
	}
	s.mu.Unlock()
	out := make([]batchSnapshot, len(bs))
	for i, b := range bs {
		out[i] = b.snapshot()
	}
	return out
}

type countingReader struct {
	r io.Reader
	n *atomic.Int64
}

func (c countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n.Add(int64(n))
	return n, err
}

// run checks or records the batch; it ends with the batch finished, with its rows and
// summary or its error.
func (c *Console) run(ctx context.Context, b *batch) {
	ctx, cancel := context.WithTimeout(ctx, batchTimeout)
	defer cancel()
	rows, sum, recorded, err := c.runStream(ctx, b)
	b.mu.Lock()
	defer b.mu.Unlock()
	b.finished, b.Finished = true, c.cfg.Now()
	b.Rows, b.Summary, b.Recorded, b.Err = rows, sum, recorded, err
	if err != nil {
		c.log.Info("console batch failed", "batch", b.ID, "err", err)
	}
}

func (c *Console) runStream(ctx context.Context, b *batch) ([]batchRow, *validate.Summary, int64, error) {
	rd, err := validate.NewReader(b.Format, countingReader{r: bytesReader(b.data), n: &b.read})
	if err != nil {
		return nil, nil, 0, fmt.Errorf("%s: %w", b.FileName, err)
	}
	var st shipstream.Stream
	if b.Kind == batchRecord {
		s, err := c.shipmentClient().RecordShipments(ctx)
		if err != nil {
			return nil, nil, 0, err
		}
		st = shipstream.Record(s)
	} else {
		s, err := c.shipmentClient().CheckShipments(ctx)
		if err != nil {
			return nil, nil, 0, err
		}
		st = shipstream.Check(s, false)
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	var counts shipstream.Counts
	items, waitSent := shipstream.Start(ctx, rd, st, &counts, batchPerMessage)
	sum := validate.NewSummary()
	var rows []batchRow
	var recvErr error
	answers := shipstream.NewAnswers(st)
	for it := range items {
		row := batchRow{}
		if it.Local != nil {
			row.V = *it.Local
		} else {
			pv, err := answers.Next()
			if err != nil {
				recvErr = err
				cancel()
				break
			}
			row.V = service.VerdictFromProto(pv)
			row.Recorded = pv.GetRecorded()
			row.ShipmentID = pv.GetShipmentId()
		}
		sum.Add(&row.V, it.Direction)
		rows = append(rows, row)
		b.done.Add(1)
	}
	for range items { // drain after an error so the sender can finish
	}
	if sendErr := waitSent(); sendErr != nil {
		return nil, nil, 0, sendErr
	}
	if recvErr != nil {
		return nil, nil, 0, recvErr
	}
	ps, err := answers.Summary(counts.Sent.Load())
	if err != nil {
		return nil, nil, 0, err
	}
	if sum.Records == 0 {
		return nil, nil, 0, fmt.Errorf("%s holds no records (blank and # comment lines are skipped)", b.FileName)
	}
	return rows, sum, ps.GetRecorded(), nil
}

// codesOf lists the finding codes of the rows, sorted.
func codesOf(rows []batchRow) []string {
	seen := map[string]bool{}
	for _, r := range rows {
		for _, f := range r.V.Findings {
			seen[f.Code] = true
		}
	}
	out := make([]string, 0, len(seen))
	for c := range seen {
		out = append(out, c)
	}
	sort.Strings(out)
	return out
}
