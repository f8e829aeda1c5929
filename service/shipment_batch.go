package service

import (
	"context"
	"fmt"
	"io"

	"google.golang.org/grpc"
	"google.golang.org/grpc/metadata"
	"google.golang.org/grpc/status"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// MaxRecordsPerBatchCall is the most records one CheckShipmentBatch or
// RecordShipmentBatch call may carry: one recording transaction's worth
// (recordFlushSize), so that a recorded batch is written whole or not at all.
const MaxRecordsPerBatchCall = recordFlushSize

// CheckShipmentBatch checks the records of one call as a CheckShipments stream sending
// them in one message would: the call runs the stream's own code over an in-process
// stream, so the verdicts cannot drift apart.
func (x *shipmentServer) CheckShipmentBatch(ctx context.Context, req *halovetv1.CheckShipmentBatchRequest) (*halovetv1.CheckShipmentBatchResponse, error) {
	if err := checkBatchSize(len(req.GetRecords())); err != nil {
		return nil, err
	}
	s := &memStream[halovetv1.CheckShipmentsRequest, halovetv1.CheckShipmentsResponse]{
		ctx: ctx,
		// The batch call's verdicts carry the per-component figures, as they always have.
		reqs: []*halovetv1.CheckShipmentsRequest{{Records: req.GetRecords(), ComponentFigures: true}},
	}
	if err := x.CheckShipments(s); err != nil {
		return nil, err
	}
	out := &halovetv1.CheckShipmentBatchResponse{}
	for _, r := range s.sent {
		switch it := r.GetItem().(type) {
		case *halovetv1.CheckShipmentsResponse_Verdict:
			out.Verdicts = append(out.Verdicts, it.Verdict)
		case *halovetv1.CheckShipmentsResponse_Verdicts:
			out.Verdicts = append(out.Verdicts, it.Verdicts.GetVerdicts()...)
		case *halovetv1.CheckShipmentsResponse_Summary:
			out.Summary = it.Summary
		}
	}
	return out, nil
}

// RecordShipmentBatch checks and records the records of one call as a RecordShipments
// stream would, over an in-process stream, writing them in one transaction.
func (x *shipmentServer) RecordShipmentBatch(ctx context.Context, req *halovetv1.RecordShipmentBatchRequest) (*halovetv1.RecordShipmentBatchResponse, error) {
	if err := checkBatchSize(len(req.GetRecords())); err != nil {
		return nil, err
	}
	s := &memStream[halovetv1.RecordShipmentsRequest, halovetv1.RecordShipmentsResponse]{
		ctx:  ctx,
		reqs: []*halovetv1.RecordShipmentsRequest{{Records: req.GetRecords()}},
	}
	if err := x.recordShipments(s, true); err != nil {
		return nil, err
	}
	out := &halovetv1.RecordShipmentBatchResponse{}
	for _, r := range s.sent {
		switch it := r.GetItem().(type) {
		case *halovetv1.RecordShipmentsResponse_Verdict:
			out.Verdicts = append(out.Verdicts, it.Verdict)
		case *halovetv1.RecordShipmentsResponse_Verdicts:
			out.Verdicts = append(out.Verdicts, it.Verdicts.GetVerdicts()...)
		case *halovetv1.RecordShipmentsResponse_Summary:
			out.Summary = it.Summary
		}
	}
	return out, nil
}

// checkBatchSize refuses an empty batch call and one over MaxRecordsPerBatchCall.
func checkBatchSize(n int) error {
	switch {
	case n == 0:
		return invalid(fieldViolation{"records", "is required: a batch call carries 1 to " + fmt.Sprint(MaxRecordsPerBatchCall) + " records"})
	case n > MaxRecordsPerBatchCall:
		return invalid(fieldViolation{"records", fmt.Sprintf(
			"a batch call carries %d records; at most %d are accepted in one call (send several calls, or use the stream)", n, MaxRecordsPerBatchCall)})
	}
	return nil
}

// memStream is a bidirectional server stream held in memory: Recv hands out reqs in
// order, then io.EOF; Send keeps the answers. It lets a unary call run a stream
// handler. Recv and Send are each called by one goroutine of the handler; sent is read
// after the handler has returned.
type memStream[Req, Resp any] struct {
	ctx  context.Context
	reqs []*Req
	sent []*Resp
}

var _ grpc.BidiStreamingServer[halovetv1.CheckShipmentsRequest, halovetv1.CheckShipmentsResponse] = (*memStream[halovetv1.CheckShipmentsRequest, halovetv1.CheckShipmentsResponse])(nil)

func (s *memStream[Req, Resp]) Recv() (*Req, error) {
	if len(s.reqs) == 0 {
		return nil, io.EOF
	}
	r := s.reqs[0]
	s.reqs = s.reqs[1:]
	return r, nil
}

func (s *memStream[Req, Resp]) Send(r *Resp) error {
	if err := s.ctx.Err(); err != nil {
		return status.FromContextError(err).Err()
	}
	s.sent = append(s.sent, r)
	return nil
}

func (s *memStream[Req, Resp]) Context() context.Context { return s.ctx }

// The unary call's own headers and trailers are the ones the client sees.
func (s *memStream[Req, Resp]) SetHeader(md metadata.MD) error  { return grpc.SetHeader(s.ctx, md) }
func (s *memStream[Req, Resp]) SendHeader(md metadata.MD) error { return grpc.SendHeader(s.ctx, md) }
func (s *memStream[Req, Resp]) SetTrailer(md metadata.MD)       { _ = grpc.SetTrailer(s.ctx, md) }

func (s *memStream[Req, Resp]) SendMsg(m any) error {
	r, ok := m.(*Resp)
	if !ok {
		return fmt.Errorf("memStream: sending %T", m)
	}
	return s.Send(r)
}

func (s *memStream[Req, Resp]) RecvMsg(m any) error {
	return fmt.Errorf("memStream: RecvMsg(%T) is not supported; use Recv", m)
}
