package service

import (
	"context"
	"errors"
	"fmt"
	"io"
	"strings"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/validate"
)

// recordFlushSize is how many records a recording stream gathers before it writes them
// in one transaction (it also writes whenever the client pauses).
const recordFlushSize = 500

func (x *shipmentServer) CheckShipment(ctx context.Context, req *halovetv1.CheckShipmentRequest) (*halovetv1.CheckShipmentResponse, error) {
	if req.GetRecord() == nil {
		return nil, invalid(fieldViolation{"record", "is required"})
	}
	env, err := x.srv.checkEnv(ctx)
	if err != nil {
		return nil, err
	}
	r := recordFromProto(req.GetRecord())
	v := validate.Check(env, &r, validate.NewMemoryLedger())
	return &halovetv1.CheckShipmentResponse{Verdict: verdictToProto(&v)}, nil
}

// summary counts verdicts for the closing message of a stream.
type summary struct{ pb halovetv1.BatchSummary }

func (s *summary) add(v *validate.Verdict, recorded, replayed bool) {
	p := &s.pb
	p.Records++
	switch v.Outcome {
	case validate.OutcomeAccepted:
		p.Accepted++
	case validate.OutcomeAcceptedWithWarnings:
		p.AcceptedWithWarnings++
	default:
		p.Rejected++
	}
	if recorded && !replayed {
		p.Recorded++
	}
	if replayed {
		p.Replayed++
	}
	for _, f := range v.Findings {
		switch f.Severity {
		case validate.SeverityError:
			if p.ErrorsByCode == nil {
				p.ErrorsByCode = map[string]int64{}
			}
			p.ErrorsByCode[f.Code]++
		case validate.SeverityWarning:
			if p.WarningsByCode == nil {
				p.WarningsByCode = map[string]int64{}
			}
			p.WarningsByCode[f.Code]++
		}
	}
}

// CheckShipments checks a stream in order; earlier accepted records of the stream draw
// on the quota the later ones are checked against. Nothing is stored.
func (x *shipmentServer) CheckShipments(stream halovetv1.ShipmentService_CheckShipmentsServer) error {
	ctx := stream.Context()
	env, err := x.srv.checkEnv(ctx)
	if err != nil {
		return err
	}
	batch := validate.NewBatch(env)
	var sum summary
	for {
		req, err := stream.Recv()
		if errors.Is(err, io.EOF) {
			return stream.Send(&halovetv1.CheckShipmentsResponse{Item: &halovetv1.CheckShipmentsResponse_Summary{Summary: &sum.pb}})
		}
		if err != nil {
			return err
		}
		if req.GetRecord() == nil {
			return invalid(fieldViolation{"record", fmt.Sprintf("message %d of the stream carries no record", sum.pb.Records+1)})
		}
		r := recordFromProto(req.GetRecord())
		v := batch.Check(&r)
		sum.add(&v, false, v.Replayed)
		if err := stream.Send(&halovetv1.CheckShipmentsResponse{Item: &halovetv1.CheckShipmentsResponse_Verdict{Verdict: verdictToProto(&v)}}); err != nil {
			return err
		}
	}
}

// pendingRecord is a checked record waiting to be written.
type pendingRecord struct {
	pb       *halovetv1.ShipmentRecord
	rec      validate.Record
	verdict  validate.Verdict
	recorded bool
	dupOf    *pendingRecord // the earlier record of the stream this one replays
}

// RecordShipments checks each record, gathers up to recordFlushSize of them (or fewer
// when the client pauses), writes the accepted ones in one transaction that draws their
// quota under row locks, and then answers each record in order. The store is
// authoritative for quotas and keys: a record it turns down gets the finding that says
// why, and the rest of the batch is stored.
func (x *shipmentServer) RecordShipments(stream halovetv1.ShipmentService_RecordShipmentsServer) error {
	ctx := stream.Context()
	env, err := x.srv.checkEnv(ctx)
	if err != nil {
		return err
	}
	recv := make(chan *halovetv1.ShipmentRecord, recordFlushSize)
	recvErr := make(chan error, 1)
	go func() {
		defer close(recv)
		for {
			req, err := stream.Recv()
			if err != nil {
				if !errors.Is(err, io.EOF) {
					recvErr <- err
				}
				return
			}
			select {
			case recv <- req.GetRecord():
			case <-ctx.Done():
				return
			}
		}
	}()

	seen := map[[2]string]seenKey{} // duplicates within the stream
	var sum summary
	var pending []*pendingRecord
	flush := func() error {
		if len(pending) == 0 {
			return nil
		}
		if err := x.srv.commit(ctx, pending); err != nil {
			return err
		}
		for _, p := range pending {
			sum.add(&p.verdict, p.recorded, p.verdict.Replayed)
			if err := stream.Send(&halovetv1.RecordShipmentsResponse{Item: &halovetv1.RecordShipmentsResponse_Verdict{Verdict: recordedVerdict(p)}}); err != nil {
				return err
			}
		}
		pending = pending[:0]
		return nil
	}
	for {
		var pb *halovetv1.ShipmentRecord
		var open bool
		if len(pending) == 0 {
			pb, open = <-recv
		} else {
			select {
			case pb, open = <-recv:
			default: // the client paused: write what we have
				if err := flush(); err != nil {
					return err
				}
				continue
			}
		}
		if !open {
			select {
			case err := <-recvErr:
				return err
			default:
			}
			if err := flush(); err != nil {
				return err
			}
			return stream.Send(&halovetv1.RecordShipmentsResponse{Item: &halovetv1.RecordShipmentsResponse_Summary{Summary: &sum.pb}})
		}
		if pb == nil {
			return invalid(fieldViolation{"record", fmt.Sprintf("message %d of the stream carries no record", sum.pb.Records+int64(len(pending))+1)})
		}
		p := &pendingRecord{pb: pb, rec: recordFromProto(pb)}
		// Quota is drawn by the store under lock, not by an in-memory ledger.
		p.verdict = validate.Check(env, &p.rec, nil)
		k := [2]string{strings.TrimSpace(p.rec.CompanyID), strings.TrimSpace(p.rec.Key)}
		if k[1] != "" {
			if prev, dup := seen[k]; dup {
				p.verdict.Add(validate.DuplicateFinding(prev.fingerprint, p.verdict.Fingerprint, prev.line))
				p.verdict.Draws = nil
				if prev.fingerprint == p.verdict.Fingerprint {
					p.verdict.Replayed = true
					p.dupOf = prev.pending
				}
			} else {
				seen[k] = seenKey{fingerprint: p.verdict.Fingerprint, line: p.rec.Line, pending: p}
			}
		}
		pending = append(pending, p)
		if len(pending) >= recordFlushSize {
			if err := flush(); err != nil {
				return err
			}
		}
	}
}

type seenKey struct {
	fingerprint string
	line        int64
	pending     *pendingRecord
}

func recordedVerdict(p *pendingRecord) *halovetv1.Verdict {
	v := verdictToProto(&p.verdict)
	v.Recorded = p.recorded
	if p.dupOf != nil {
		// A replay of an earlier record of this stream is stored if that one is.
		v.Recorded = p.dupOf.recorded
	}
	return v
}

// commit writes the accepted records of a batch and folds the store's answers into
// their verdicts. Keys stored by earlier calls are looked up first, so that a retried
// batch is answered "replayed" even where a re-check would now find the quota used up.
func (s *Server) commit(ctx context.Context, batch []*pendingRecord) error {
	keys := make([][2]string, 0, len(batch))
	for _, p := range batch {
		if !p.verdict.Replayed {
			keys = append(keys, [2]string{strings.TrimSpace(p.rec.CompanyID), strings.TrimSpace(p.rec.Key)})
		}
	}
	stored, err := s.store.StoredFingerprints(ctx, keys)
	if err != nil {
		return toStatus(ctx, s.log, err)
	}
	var rows []store.ShipmentRow
	var idx []*pendingRecord
	for _, p := range batch {
		if p.verdict.Replayed {
			continue
		}
		k := [2]string{strings.TrimSpace(p.rec.CompanyID), strings.TrimSpace(p.rec.Key)}
		if fp, ok := stored[k]; ok {
			// Judged by what was stored: a replay is accepted as it was, a conflict rejected.
			p.verdict.Findings = nil
			p.verdict.Draws = nil
			p.verdict.Add(validate.DuplicateFinding(fp, p.verdict.Fingerprint, 0))
			if fp == p.verdict.Fingerprint {
				p.verdict.Replayed, p.recorded = true, true
			}
			continue
		}
		if p.verdict.Outcome == validate.OutcomeRejected {
			continue
		}
		row, err := shipmentRow(p.pb, &p.rec, &p.verdict)
		if err != nil {
			return status.Errorf(codes.Internal, "record %q: %v", p.rec.Key, err)
		}
		rows = append(rows, row)
		idx = append(idx, p)
	}
	if len(rows) == 0 {
		return nil
	}
	res, err := s.store.RecordShipments(ctx, rows)
	if err != nil {
		return toStatus(ctx, s.log, err)
	}
	for i, r := range res {
		p := idx[i]
		switch r.Status {
		case store.RecordStored:
			p.recorded = true
		case store.RecordReplayed:
			p.recorded, p.verdict.Replayed = true, true
			p.verdict.Draws = nil
			p.verdict.Add(findingFor(validate.CodeDupReplay, "record_key", "an identical record with this key was stored by a concurrent call; not counted again"))
		case store.RecordKeyConflict:
			p.verdict.Add(findingFor(validate.CodeDupKeyConflict, "record_key", "a concurrent call stored other content under this key; give a new record a new key"))
		case store.RecordQuotaShort:
			p.verdict.Add(findingFor(validate.CodeQuotaExceeded, "licence_number", fmt.Sprintf(
				"licence %s line %d has %.9g left when this record is written (other records drew on it first); it needs more",
				r.LicenceNumber, r.LineNumber, r.Remaining.Float())))
		case store.RecordLicenceInactive:
			p.verdict.Add(findingFor(validate.CodeLicenceInactive, "licence_number", fmt.Sprintf(
				"licence %s is %s when this record is written", r.LicenceNumber, r.Detail)))
		}
	}
	return nil
}
