package service

import (
	"context"
	"fmt"
	"strings"
	"sync/atomic"

	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/validate"
)

// The shipment calls: each decodes, runs the workflow in package ledger and encodes its
// answer (the streams through streamIn/streamOut, which adapt the wire's messages).

// recordFlushSize is how many records a recording stream gathers before it writes them
// in one transaction (it also writes whenever the client pauses).
const recordFlushSize = 1000

// CheckShipment checks one record; nothing is stored.
func (x *shipmentServer) CheckShipment(ctx context.Context, req *halovetv1.CheckShipmentRequest) (*halovetv1.CheckShipmentResponse, error) {
	if req.GetRecord() == nil {
		return nil, invalid(fieldViolation{"record", "is required"})
	}
	if err := recordsInScope(ctx, "record", req.GetRecord()); err != nil {
		return nil, err
	}
	a, err := x.srv.ships.CheckOne(ctx, ledgerCaller(ctx), recordFromProto(req.GetRecord()))
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	return &halovetv1.CheckShipmentResponse{Verdict: answerToProto(&a)}, nil
}

// CheckShipments checks a stream in order (ledger.Shipments.CheckStream); nothing is
// stored. A message with one record is answered with one verdict, a message with several
// with a VerdictBatch.
func (x *shipmentServer) CheckShipments(stream halovetv1.ShipmentService_CheckShipmentsServer) error {
	ctx := stream.Context()
	in := &streamIn{srv: x.srv, ctx: ctx}
	s := &wireStream{}
	s.recv = func() (ledger.Message, error) {
		req, err := stream.Recv()
		if err != nil {
			return ledger.Message{}, err
		}
		if in.messages == 0 && !req.GetComponentFigures() {
			// Read before the first message's records are handed on: the sender, which
			// answers them, only reads it after that.
			s.noComponents.Store(true)
		}
		return in.message(req.GetRecord(), req.GetRecords()), nil
	}
	s.send = func(vs []*halovetv1.Verdict, single bool) error {
		resp := &halovetv1.CheckShipmentsResponse{Item: &halovetv1.CheckShipmentsResponse_Verdicts{Verdicts: &halovetv1.VerdictBatch{Verdicts: vs}}}
		if single {
			resp.Item = &halovetv1.CheckShipmentsResponse_Verdict{Verdict: vs[0]}
		}
		return stream.Send(resp)
	}
	s.close = func(sum *halovetv1.BatchSummary) error {
		return stream.Send(&halovetv1.CheckShipmentsResponse{Item: &halovetv1.CheckShipmentsResponse_Summary{Summary: sum}})
	}
	return toStatus(ctx, x.srv.log, x.srv.ships.CheckStream(ctx, ledgerCaller(ctx), s))
}

// RecordShipments checks each record and records the accepted ones
// (ledger.Shipments.RecordStream), answering in the records' order.
func (x *shipmentServer) RecordShipments(stream halovetv1.ShipmentService_RecordShipmentsServer) error {
	return x.recordShipments(stream, false)
}

// recordShipments is RecordShipments; with wholeCall, a call of at most recordFlushSize
// records is written in one transaction (RecordShipmentBatch).
func (x *shipmentServer) recordShipments(stream halovetv1.ShipmentService_RecordShipmentsServer, wholeCall bool) error {
	ctx := stream.Context()
	in := &streamIn{srv: x.srv, ctx: ctx, recording: true}
	s := &wireStream{recv: func() (ledger.Message, error) {
		req, err := stream.Recv()
		if err != nil {
			return ledger.Message{}, err
		}
		return in.message(req.GetRecord(), req.GetRecords()), nil
	}, send: func(vs []*halovetv1.Verdict, single bool) error {
		resp := &halovetv1.RecordShipmentsResponse{Item: &halovetv1.RecordShipmentsResponse_Verdicts{Verdicts: &halovetv1.VerdictBatch{Verdicts: vs}}}
		if single {
			resp.Item = &halovetv1.RecordShipmentsResponse_Verdict{Verdict: vs[0]}
		}
		return stream.Send(resp)
	}, close: func(sum *halovetv1.BatchSummary) error {
		return stream.Send(&halovetv1.RecordShipmentsResponse{Item: &halovetv1.RecordShipmentsResponse_Summary{Summary: sum}})
	}}
	return toStatus(ctx, x.srv.log, x.srv.ships.RecordStream(ctx, ledgerCaller(ctx), s, wholeCall))
}

// ledgerCaller is the call's caller as the workflows see it.
func ledgerCaller(ctx context.Context) ledger.Caller {
	own, scoped := callCompany(ctx)
	return ledger.Caller{Company: own, Scoped: scoped}
}

// recordsInScope refuses, for a company-scoped caller (a trader), a record of another
// company, naming the field (field, or field[i] for several records).
func recordsInScope(ctx context.Context, field string, recs ...*halovetv1.ShipmentRecord) error {
	own, scoped := callCompany(ctx)
	if !scoped {
		return nil
	}
	for i, r := range recs {
		if c := strings.TrimSpace(r.GetCompanyId()); c != own {
			f := field + ".company_id"
			if len(recs) > 1 || field == "records" {
				f = fmt.Sprintf("%s[%d].company_id", field, i)
			}
			return outOfScope(f, c, own)
		}
	}
	return nil
}

// streamIn decodes the messages of a shipment stream, refusing (Message.Err, answered in
// order after the records before it) a message without a record, one over the limit of
// records per message, and, for a trader, one holding another company's record.
type streamIn struct {
	srv       *Server
	ctx       context.Context
	recording bool  // the message number, not the record count, names an empty message
	messages  int   // received so far
	records   int64 // received so far
}

func (in *streamIn) message(one *halovetv1.ShipmentRecord, more []*halovetv1.ShipmentRecord) ledger.Message {
	in.messages++
	recs := requestRecords(one, more)
	m := ledger.Message{Single: one != nil && len(more) == 0}
	switch {
	case len(recs) == 0 && in.recording:
		m.Err = invalid(fieldViolation{"record", fmt.Sprintf("message %d of the stream carries no record", in.messages)})
	case len(recs) == 0:
		m.Err = invalid(fieldViolation{"record", fmt.Sprintf("the message after record %d of the stream carries no record", in.records)})
	default:
		if m.Err = in.srv.checkRecordsPerMessage(len(recs)); m.Err == nil {
			m.Err = recordsInScope(in.ctx, "records", recs...)
		}
	}
	if m.Err != nil {
		return m
	}
	in.records += int64(len(recs))
	m.Records = make([]validate.Record, len(recs))
	for i, pb := range recs {
		m.Records[i] = recordFromProto(pb)
	}
	if in.recording {
		m.Encode = func(i int) ([]byte, error) { return storedRecordJSON(recs[i]) }
	}
	return m
}

// wireStream adapts a shipment stream of the wire to ledger.VerdictStream.
type wireStream struct {
	recv  func() (ledger.Message, error)
	send  func(vs []*halovetv1.Verdict, single bool) error
	close func(*halovetv1.BatchSummary) error
	// noComponents: the client did not ask for per-component figures
	// (CheckShipmentsRequest.component_figures on the first message); they are left out.
	noComponents atomic.Bool
}

func (s *wireStream) Recv() (ledger.Message, error) { return s.recv() }

func (s *wireStream) Send(as []ledger.Answer, single bool) error {
	vs := make([]*halovetv1.Verdict, len(as))
	components := !s.noComponents.Load()
	slab := newVerdictSlab(len(as))
	for i := range as {
		vs[i] = slab.answer(&as[i], components)
	}
	return s.send(vs, single)
}

func (s *wireStream) Close(sum ledger.Summary) error { return s.close(summaryToProto(&sum)) }

// requestRecords lists the records of one stream message in order.
func requestRecords(one *halovetv1.ShipmentRecord, more []*halovetv1.ShipmentRecord) []*halovetv1.ShipmentRecord {
	if one == nil {
		return more
	}
	if len(more) == 0 {
		return []*halovetv1.ShipmentRecord{one}
	}
	return append([]*halovetv1.ShipmentRecord{one}, more...)
}

// answerToProto is the wire verdict of a workflow's answer.
func answerToProto(a *ledger.Answer) *halovetv1.Verdict { return answerToProtoWith(a, true) }

// answerToProtoWith is answerToProto, with the per-component figures only when components
// is set.
func answerToProtoWith(a *ledger.Answer, components bool) *halovetv1.Verdict {
	return (*verdictSlab)(nil).answer(a, components)
}

// answer is answerToProtoWith, the messages of a verdict made here taken from s.
func (s *verdictSlab) answer(a *ledger.Answer, components bool) *halovetv1.Verdict {
	v, kept := a.Kept.(*halovetv1.Verdict)
	if kept && v != nil {
		v.RecordKey, v.SourceLine = a.Verdict.RecordKey, a.Verdict.Line
		if !components && v.Figures != nil {
			v.Figures.Components = nil
		}
	} else {
		v = s.verdict(&a.Verdict, components)
	}
	if a.Recorded {
		v.Recorded = true
	}
	if a.Replayed {
		v.Replayed = true
	}
	if a.Stored != nil {
		withStored(v, a.Stored)
	}
	if n := a.Notice; n != nil {
		v.Findings = append(v.Findings, &halovetv1.Finding{Code: n.Code, Severity: severityProto[n.Severity], Field: n.Field, Message: n.Message})
	}
	return v
}

func summaryToProto(s *ledger.Summary) *halovetv1.BatchSummary {
	return &halovetv1.BatchSummary{Records: s.Records, Accepted: s.Accepted, AcceptedWithWarnings: s.AcceptedWithWarnings,
		Rejected: s.Rejected, Recorded: s.Recorded, Replayed: s.Replayed, ErrorsByCode: s.ErrorsByCode, WarningsByCode: s.WarningsByCode}
}

// verdictCodec keeps verdicts with their shipments in the wire's encoding (a
// halovet.v1.Verdict, deterministic protocol buffer bytes), so that a replay is answered
// the verdict stored, to the byte.
type verdictCodec struct{}

func (verdictCodec) Encode(v *validate.Verdict) []byte {
	b, _ := verdictCodec{}.EncodeWire(v)
	return b
}

// EncodeWire is Encode and the wire verdict encoded (ledger.WireVerdictCodec), which a
// recording stream answers.
func (verdictCodec) EncodeWire(v *validate.Verdict) ([]byte, any) {
	a := verdictToProto(v)
	a.Recorded = true
	return encodeVerdict(a), a
}

func (verdictCodec) Decode(b []byte) (*ledger.KeptVerdict, error) {
	v, err := storedVerdict(b)
	if err != nil || v == nil {
		return nil, err
	}
	// What the summary counts: the outcome and the findings' codes and severities.
	k := &ledger.KeptVerdict{Wire: v, Verdict: validate.Verdict{Outcome: validate.OutcomeRejected}}
	switch v.GetOutcome() {
	case halovetv1.Outcome_OUTCOME_ACCEPTED:
		k.Verdict.Outcome = validate.OutcomeAccepted
	case halovetv1.Outcome_OUTCOME_ACCEPTED_WITH_WARNINGS:
		k.Verdict.Outcome = validate.OutcomeAcceptedWithWarnings
	}
	for _, f := range v.GetFindings() {
		sev := validate.SeverityNotice
		switch f.GetSeverity() {
		case halovetv1.Severity_SEVERITY_WARNING:
			sev = validate.SeverityWarning
		case halovetv1.Severity_SEVERITY_ERROR:
			sev = validate.SeverityError
		}
		k.Verdict.Findings = append(k.Verdict.Findings, validate.Finding{Code: f.GetCode(), Severity: sev})
	}
	return k, nil
}
