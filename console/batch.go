package console

import (
	"context"
	"errors"
	"fmt"
	"io"
	"sort"
	"strconv"
	"sync"
	"sync/atomic"
	"time"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/terms"
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

// stream is what a batch needs of the two streaming calls.
type stream interface {
	send([]*halovetv1.ShipmentRecord) error
	closeSend() error
	recv() ([]*halovetv1.Verdict, *halovetv1.BatchSummary, error)
}

type checkStream struct {
	s halovetv1.ShipmentService_CheckShipmentsClient
}

func (c checkStream) send(r []*halovetv1.ShipmentRecord) error {
	return c.s.Send(&halovetv1.CheckShipmentsRequest{Records: r})
}
func (c checkStream) closeSend() error { return c.s.CloseSend() }
func (c checkStream) recv() ([]*halovetv1.Verdict, *halovetv1.BatchSummary, error) {
	m, err := c.s.Recv()
	return verdictsOf(m.GetVerdict(), m.GetVerdicts()), m.GetSummary(), err
}

type recordStream struct {
	s halovetv1.ShipmentService_RecordShipmentsClient
}

func (c recordStream) send(r []*halovetv1.ShipmentRecord) error {
	return c.s.Send(&halovetv1.RecordShipmentsRequest{Records: r})
}
func (c recordStream) closeSend() error { return c.s.CloseSend() }
func (c recordStream) recv() ([]*halovetv1.Verdict, *halovetv1.BatchSummary, error) {
	m, err := c.s.Recv()
	return verdictsOf(m.GetVerdict(), m.GetVerdicts()), m.GetSummary(), err
}

func verdictsOf(one *halovetv1.Verdict, many *halovetv1.VerdictBatch) []*halovetv1.Verdict {
	if one != nil {
		return []*halovetv1.Verdict{one}
	}
	return many.GetVerdicts()
}

// item is one line of the file in order: answered here (a line that could not be read)
// or by the server.
type item struct {
	local     *validate.Verdict
	direction terms.Direction
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
	var st stream
	if b.Kind == batchRecord {
		s, err := c.shipmentClient().RecordShipments(ctx)
		if err != nil {
			return nil, nil, 0, err
		}
		st = recordStream{s}
	} else {
		s, err := c.shipmentClient().CheckShipments(ctx)
		if err != nil {
			return nil, nil, 0, err
		}
		st = checkStream{s}
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	items := make(chan item, 4096)
	var sent atomic.Int64
	var sendErr error
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		defer close(items)
		sendErr = sendAll(ctx, rd, st, items, &sent)
	}()
	sum := validate.NewSummary()
	var rows []batchRow
	var queue []*halovetv1.Verdict
	var recvErr error
	for it := range items {
		row := batchRow{}
		if it.local != nil {
			row.V = *it.local
		} else {
			for len(queue) == 0 && recvErr == nil {
				vs, _, err := st.recv()
				if err == nil && len(vs) == 0 {
					err = errors.New("the server ended the stream before answering every record")
				}
				recvErr = err
				queue = vs
			}
			if recvErr != nil {
				cancel()
				break
			}
			row.V = service.VerdictFromProto(queue[0])
			row.Recorded = queue[0].GetRecorded()
			row.ShipmentID = queue[0].GetShipmentId()
			queue = queue[1:]
		}
		sum.Add(&row.V, it.direction)
		rows = append(rows, row)
		b.done.Add(1)
	}
	for range items { // drain after an error so the sender can finish
	}
	wg.Wait()
	if sendErr != nil {
		return nil, nil, 0, sendErr
	}
	if recvErr != nil {
		return nil, nil, 0, recvErr
	}
	_, ps, err := st.recv()
	switch {
	case err != nil:
		return nil, nil, 0, err
	case ps == nil:
		return nil, nil, 0, errors.New("the server sent no summary")
	case ps.GetRecords() != sent.Load():
		return nil, nil, 0, fmt.Errorf("the server counted %d records, %d were sent", ps.GetRecords(), sent.Load())
	}
	if sum.Records == 0 {
		return nil, nil, 0, fmt.Errorf("%s holds no records (blank and # comment lines are skipped)", b.FileName)
	}
	return rows, sum, ps.GetRecorded(), nil
}

// sendAll reads the records and sends them; lines that cannot be read are answered here
// and never sent, so nothing from a bad line is recorded.
func sendAll(ctx context.Context, rd validate.RecordReader, st stream, items chan<- item, sent *atomic.Int64) error {
	buf := make([]*halovetv1.ShipmentRecord, 0, batchPerMessage)
	flush := func() error {
		if len(buf) == 0 {
			return nil
		}
		err := st.send(buf)
		sent.Add(int64(len(buf)))
		buf = make([]*halovetv1.ShipmentRecord, 0, batchPerMessage)
		if errors.Is(err, io.EOF) {
			return nil // the server ended the call; the receiver reports why
		}
		return err
	}
	for {
		rec, lerr, err := rd.Next()
		if errors.Is(err, io.EOF) {
			if err := flush(); err != nil {
				return err
			}
			return st.closeSend()
		}
		if err != nil {
			return fmt.Errorf("reading the file: %w", err)
		}
		var it item
		switch {
		case lerr != nil:
			v := validate.LineErrorVerdict(lerr)
			it.local = &v
		case len(rec.Unreadable) > 0:
			v := validate.UnreadableVerdict(&rec)
			it.local = &v
		default:
			buf = append(buf, service.RecordToProto(&rec))
			it.direction = rec.Direction
		}
		select {
		case items <- it:
		case <-ctx.Done():
			return nil
		}
		if len(buf) >= batchPerMessage {
			if err := flush(); err != nil {
				return err
			}
		}
	}
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
