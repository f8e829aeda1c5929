package shipstream

import (
	"context"
	"errors"
	"fmt"
	"io"
	"sync/atomic"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/terms"
	"github.com/halovet/halovet/validate"
)

// Stream is what a batch needs of the two streaming calls: records go out several per
// message, verdicts come back in the records' order, alone or in groups, and a summary
// closes the stream.
type Stream interface {
	Send([]*halovetv1.ShipmentRecord) error
	CloseSend() error
	Recv() ([]*halovetv1.Verdict, *halovetv1.BatchSummary, error)
}

// Check is a CheckShipments call as a Stream. componentFigures asks for the figures per
// component in the verdicts; the server reads it on the first message.
func Check(s halovetv1.ShipmentService_CheckShipmentsClient, componentFigures bool) Stream {
	return checkStream{s: s, components: componentFigures}
}

// Record is a RecordShipments call as a Stream.
func Record(s halovetv1.ShipmentService_RecordShipmentsClient) Stream {
	return recordStream{s: s}
}

type checkStream struct {
	s          halovetv1.ShipmentService_CheckShipmentsClient
	components bool
}

func (c checkStream) Send(r []*halovetv1.ShipmentRecord) error {
	return c.s.Send(&halovetv1.CheckShipmentsRequest{Records: r, ComponentFigures: c.components})
}
func (c checkStream) CloseSend() error { return c.s.CloseSend() }
func (c checkStream) Recv() ([]*halovetv1.Verdict, *halovetv1.BatchSummary, error) {
	m, err := c.s.Recv()
	return verdictsOf(m.GetVerdict(), m.GetVerdicts()), m.GetSummary(), err
}

type recordStream struct {
	s halovetv1.ShipmentService_RecordShipmentsClient
}

func (c recordStream) Send(r []*halovetv1.ShipmentRecord) error {
	return c.s.Send(&halovetv1.RecordShipmentsRequest{Records: r})
}
func (c recordStream) CloseSend() error { return c.s.CloseSend() }
func (c recordStream) Recv() ([]*halovetv1.Verdict, *halovetv1.BatchSummary, error) {
	m, err := c.s.Recv()
	return verdictsOf(m.GetVerdict(), m.GetVerdicts()), m.GetSummary(), err
}

func verdictsOf(one *halovetv1.Verdict, many *halovetv1.VerdictBatch) []*halovetv1.Verdict {
	if one != nil {
		return []*halovetv1.Verdict{one}
	}
	return many.GetVerdicts()
}

// Item is one line of the file, in the file's order: answered on the client (Local is
// set: a line that could not be read) or sent to the server, whose verdict for it comes
// back in the same order.
type Item struct {
	Local     *validate.Verdict
	Direction terms.Direction // of a record sent
}

// Counts are what Send counts as it goes, for progress and for checking the summary.
type Counts struct {
	Sent atomic.Int64 // records sent to the server
	Read atomic.Int64 // lines read: sent or answered on the client
}

// Send reads the records of rd and sends them, perMessage (at least 1) to a stream
// message, then closes the sending side. Every line goes to items in the file's order as
// it is read, counted in c.Read before the receiver can see it; a record's answer is
// awaited only after its message is sent, which happens before items (when its capacity
// exceeds perMessage) can fill. Send stops without an error when ctx is done or the
// server ends the call (the receiver reports why). It does not close items.
func Send(ctx context.Context, rd validate.RecordReader, st Stream, items chan<- Item, c *Counts, perMessage int) error {
	perMessage = max(perMessage, 1)
	buf := make([]*halovetv1.ShipmentRecord, 0, perMessage)
	flush := func() error {
		if len(buf) == 0 {
			return nil
		}
		err := st.Send(buf)
		c.Sent.Add(int64(len(buf)))
		buf = make([]*halovetv1.ShipmentRecord, 0, perMessage)
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
			return st.CloseSend()
		}
		if err != nil {
			return fmt.Errorf("reading the input: %w", err)
		}
		var it Item
		switch {
		case lerr != nil:
			v := validate.LineErrorVerdict(lerr)
			it.Local = &v
		case len(rec.Unreadable) > 0:
			v := validate.UnreadableVerdict(&rec)
			it.Local = &v
		default:
			buf = append(buf, service.RecordToProto(&rec))
			it.Direction = rec.Direction
		}
		c.Read.Add(1)
		select {
		case items <- it:
		case <-ctx.Done():
			return nil
		}
		if len(buf) >= perMessage {
			if err := flush(); err != nil {
				return err
			}
		}
	}
}

// itemsInFlight is the capacity of Start's items channel: it bounds memory, and exceeds
// the server's write batch so that a recording stream always has enough records in flight
// to fill one.
const itemsInFlight = 4096

// Start runs Send in a goroutine of its own and returns the items it sends, in the file's
// order, on a channel closed when Send returns. The receiver reads the items to the end
// (draining them after an error, with ctx cancelled, so that Send can finish), then calls
// wait for Send's error.
func Start(ctx context.Context, rd validate.RecordReader, st Stream, c *Counts, perMessage int) (items <-chan Item, wait func() error) {
	ch := make(chan Item, itemsInFlight)
	done := make(chan error, 1)
	go func() {
		defer close(ch)
		done <- Send(ctx, rd, st, ch, c, perMessage)
	}()
	var err error
	var waited bool
	return ch, func() error {
		if !waited {
			err, waited = <-done, true
		}
		return err
	}
}

// Answers hands out the server's verdicts one at a time, in the records' order.
type Answers struct {
	st    Stream
	queue []*halovetv1.Verdict // received and not yet handed out
}

// NewAnswers reads the verdicts of st.
func NewAnswers(st Stream) *Answers { return &Answers{st: st} }

// Next is the verdict of the next record sent. It is an error for the stream to end, or
// to close with its summary, before every record sent is answered.
func (a *Answers) Next() (*halovetv1.Verdict, error) {
	for len(a.queue) == 0 {
		vs, sum, err := a.st.Recv()
		switch {
		case err != nil:
			return nil, err
		case len(vs) == 0 && sum == nil:
			return nil, errors.New("the server sent an empty answer")
		case len(vs) == 0:
			return nil, errors.New("the server ended the stream before answering every record")
		}
		a.queue = vs
	}
	v := a.queue[0]
	a.queue = a.queue[1:]
	return v, nil
}

// Summary reads the summary that closes the stream, once every record is answered, and
// checks it against the sent records counted: no verdict left over, a summary, and the
// same number of records.
func (a *Answers) Summary(sent int64) (*halovetv1.BatchSummary, error) {
	if len(a.queue) > 0 {
		return nil, fmt.Errorf("the server answered %d records more than were sent", len(a.queue))
	}
	vs, sum, err := a.st.Recv()
	switch {
	case err != nil:
		return nil, err
	case len(vs) > 0:
		return nil, fmt.Errorf("the server answered %d records more than were sent", len(vs))
	case sum == nil:
		return nil, errors.New("the server sent no summary")
	case sum.GetRecords() != sent:
		return nil, fmt.Errorf("the server counted %d records, %d were sent", sum.GetRecords(), sent)
	}
	return sum, nil
}
