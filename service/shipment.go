package service

import (
	"context"
	"errors"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/terms"
	"github.com/halovet/halovet/validate"
)

// recordFlushSize is how many records a recording stream gathers before it writes them
// in one transaction (it also writes whenever the client pauses).
const recordFlushSize = 1000

func (x *shipmentServer) CheckShipment(ctx context.Context, req *halovetv1.CheckShipmentRequest) (*halovetv1.CheckShipmentResponse, error) {
	if req.GetRecord() == nil {
		return nil, invalid(fieldViolation{"record", "is required"})
	}
	if err := recordsInScope(ctx, "record", req.GetRecord()); err != nil {
		return nil, err
	}
	env, err := x.srv.checkEnvFor(ctx, req.GetRecord())
	if err != nil {
		return nil, err
	}
	recs := []*halovetv1.ShipmentRecord{req.GetRecord()}
	known, err := x.srv.storedFor(ctx, recs)
	if err != nil {
		return nil, err
	}
	r := recordFromProto(req.GetRecord())
	if a, ok := known.answer(0, env, &r); ok {
		return &halovetv1.CheckShipmentResponse{Verdict: a}, nil
	}
	v := validate.Check(env, &r, validate.NewMemoryLedger())
	return &halovetv1.CheckShipmentResponse{Verdict: verdictToProto(&v)}, nil
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

// summary counts verdicts for the closing message of a stream.
type summary struct{ pb halovetv1.BatchSummary }

// addProto counts a verdict as answered (a replay answers the stored one).
func (s *summary) addProto(v *halovetv1.Verdict) {
	var vv validate.Verdict
	switch v.GetOutcome() {
	case halovetv1.Outcome_OUTCOME_ACCEPTED:
		vv.Outcome = validate.OutcomeAccepted
	case halovetv1.Outcome_OUTCOME_ACCEPTED_WITH_WARNINGS:
		vv.Outcome = validate.OutcomeAcceptedWithWarnings
	default:
		vv.Outcome = validate.OutcomeRejected
	}
	for _, f := range v.GetFindings() {
		sev := validate.SeverityNotice
		switch f.GetSeverity() {
		case halovetv1.Severity_SEVERITY_WARNING:
			sev = validate.SeverityWarning
		case halovetv1.Severity_SEVERITY_ERROR:
			sev = validate.SeverityError
		}
		vv.Findings = append(vv.Findings, validate.Finding{Code: f.GetCode(), Severity: sev})
	}
	s.add(&vv, v.GetRecorded(), v.GetReplayed())
}

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

// CheckShipments checks a stream in order; earlier accepted records of the stream draw
// on the quota the later ones are checked against. Nothing is stored. A message with one
// record is answered with one verdict, a message with several with a VerdictBatch.
//
// Three stages overlap: receiving (and decoding) the next message, checking the current
// one (in order: the quota ledger and the duplicate keys depend on it), and encoding and
// sending the previous answers. Each hand-over holds at most a few messages, so memory
// stays bounded however long the stream is.
func (x *shipmentServer) CheckShipments(stream halovetv1.ShipmentService_CheckShipmentsServer) error {
	ctx, cancel := context.WithCancel(stream.Context())
	defer cancel()
	// The environment is read at the start, so that a register that cannot be checked
	// against fails the call before any record is read, and again for every message: a
	// stream open for hours judges each message against the register as it stands.
	env, err := x.srv.checkEnv(ctx)
	if err != nil {
		return err
	}
	type checked struct {
		verdicts []validate.Verdict
		answers  map[int]*halovetv1.Verdict // records recorded already, or whose key is taken
		single   bool
	}
	reqs := make(chan *halovetv1.CheckShipmentsRequest, 4)
	answers := make(chan checked, 4)
	var recvErr, sendErr error
	recvFailed := make(chan error, 1) // recvErr, for the checker that stops on the cancel
	recvDone, sendDone := make(chan struct{}), make(chan struct{})
	go func() { // receive
		defer close(recvDone)
		defer close(reqs)
		for {
			req, err := stream.Recv()
			if err != nil {
				if !errors.Is(err, io.EOF) {
					recvErr = err
					recvFailed <- err
					cancel()
				}
				return
			}
			select {
			case reqs <- req:
			case <-ctx.Done():
				return
			}
		}
	}()
	go func() { // encode and send
		defer close(sendDone)
		for a := range answers {
			out := make([]*halovetv1.Verdict, len(a.verdicts))
			for i := range a.verdicts {
				if v, ok := a.answers[i]; ok {
					out[i] = v
					continue
				}
				out[i] = verdictToProto(&a.verdicts[i])
			}
			resp := &halovetv1.CheckShipmentsResponse{Item: &halovetv1.CheckShipmentsResponse_Verdicts{Verdicts: &halovetv1.VerdictBatch{Verdicts: out}}}
			if a.single {
				resp.Item = &halovetv1.CheckShipmentsResponse_Verdict{Verdict: out[0]}
			}
			if err := stream.Send(resp); err != nil {
				sendErr = err
				cancel()
				for range answers { // let the checker finish
				}
				return
			}
		}
	}()

	batch := validate.NewBatch(env)
	var sum summary
	var checkErr error
	drained := false // the receiver has finished: the client closed its side, or Recv failed
check:
	for {
		var req *halovetv1.CheckShipmentsRequest
		var ok bool
		select {
		case req, ok = <-reqs:
		case <-ctx.Done():
			break check
		}
		if !ok {
			drained = true
			break
		}
		recs := requestRecords(req.GetRecord(), req.GetRecords())
		if len(recs) == 0 {
			checkErr = invalid(fieldViolation{"record", fmt.Sprintf("the message after record %d of the stream carries no record", sum.pb.Records)})
			break
		}
		if checkErr = x.srv.checkRecordsPerMessage(len(recs)); checkErr != nil {
			break
		}
		if checkErr = recordsInScope(ctx, "records", recs...); checkErr != nil {
			break
		}
		if env, checkErr = x.srv.checkEnvFor(ctx, recs...); checkErr != nil {
			break
		}
		batch.SetEnv(env)
		var known storedRecords
		if known, checkErr = x.srv.storedFor(ctx, recs); checkErr != nil {
			break
		}
		vs := make([]validate.Verdict, len(recs))
		var given map[int]*halovetv1.Verdict
		// Records already recorded are answered by what was recorded; the others are checked
		// on every core (Batch.CheckAll: the same verdicts as one at a time; quota and keys
		// are settled in order).
		rs := make([]validate.Record, 0, len(recs))
		at := make([]int, 0, len(recs))
		for i, pb := range recs {
			r := recordFromProto(pb)
			if a, ok := known.answer(i, env, &r); ok {
				if given == nil {
					given = map[int]*halovetv1.Verdict{}
				}
				given[i] = a
				continue
			}
			rs = append(rs, r)
			at = append(at, i)
		}
		checkedVs := make([]validate.Verdict, len(rs))
		batch.CheckAll(rs, checkedVs)
		for k, i := range at {
			vs[i] = checkedVs[k]
		}
		for i := range vs {
			if a, ok := given[i]; ok {
				sum.addProto(a)
				continue
			}
			sum.add(&vs[i], false, vs[i].Replayed)
		}
		select {
		case answers <- checked{verdicts: vs, answers: given, single: req.GetRecord() != nil && len(req.GetRecords()) == 0}:
		case <-ctx.Done():
			break check
		}
	}
	close(answers)
	<-sendDone
	switch {
	case checkErr != nil:
		return checkErr // returning ends the call, which ends the receiver's Recv
	case sendErr != nil:
		return sendErr
	case !drained:
		select {
		case err := <-recvFailed: // a message that could not be received (malformed, too large)
			return err
		default:
		}
		return status.FromContextError(ctx.Err()).Err()
	}
	<-recvDone
	if recvErr != nil {
		return recvErr
	}
	return stream.Send(&halovetv1.CheckShipmentsResponse{Item: &halovetv1.CheckShipmentsResponse_Summary{Summary: &sum.pb}})
}

// pendingRecord is a checked record waiting to be written.
type pendingRecord struct {
	pb       *halovetv1.ShipmentRecord
	single   bool // came alone in its message: answered with a lone verdict
	rec      validate.Record
	verdict  validate.Verdict
	recorded bool
	keyHash  uint64 // hash of company and key (when the record has a key)
	hasKey   bool
	// streamDup: an earlier record of this stream had the same company and key; the
	// verdict says so (a replay, or a conflict) and the store is not asked.
	streamDup bool
	row       store.ShipmentRow // what is stored, built while the previous batch is written
	rowErr    error
	lic       *validate.Licence // the licence the record names, as checked
	// answer is the verdict as stored (for a stored record, with the notices of its own
	// draw) or as stored earlier (a replay); nil answers verdict.
	answer *halovetv1.Verdict
}

// windowEntry is what a recording stream keeps per key in its windows.
type windowEntry struct {
	fingerprint uint64 // hash of the record's content fingerprint
	line        int64  // the record's source line
	recorded    bool   // the record was stored
}

type incoming struct {
	pb     *halovetv1.ShipmentRecord
	single bool
}

// RecordShipments checks each record and writes the accepted ones in batches of up to
// recordFlushSize, each in one transaction that draws their quota under row locks. The
// next batch is checked while the previous one is written; a batch is handed to the
// writer as soon as the writer is free, so a client that waits for its answers is never
// kept waiting for a full batch. Answers go back in the records' order. The store is
// authoritative for quotas and keys: a record it turns down gets the finding that says
// why, and the rest of the batch is stored. Memory is bounded: the batches in flight,
// and a window of the last validate.DuplicateWindow keys (as hashes) so that a key
// repeated within the stream gets the same answer whichever batch it falls in; keys
// from earlier calls are found in the store.
func (x *shipmentServer) RecordShipments(stream halovetv1.ShipmentService_RecordShipmentsServer) error {
	return x.recordShipments(stream, false)
}

// recordShipments is RecordShipments; with wholeCall, records are handed to the writer
// only when recordFlushSize are pending or the client has closed its side, so a call of
// at most recordFlushSize records is written in one transaction (RecordShipmentBatch).
func (x *shipmentServer) recordShipments(stream halovetv1.ShipmentService_RecordShipmentsServer, wholeCall bool) error {
	ctx, cancel := context.WithCancel(stream.Context())
	defer cancel()
	// Read at the start, so that a register that cannot be checked against fails the call
	// before any record is read, and again for every record: a stream open for hours
	// judges each record against the register as it stands.
	if _, err := x.srv.checkEnv(ctx); err != nil {
		return err
	}
	// Balances as the stream first saw each licence (see ledger.WithBalancesOf).
	var pinned ledger.PinnedBalances
	recv := make(chan incoming, recordFlushSize)
	recvErr := make(chan error, 1)
	go func() {
		defer close(recv)
		for n := 0; ; n++ {
			req, err := stream.Recv()
			if err != nil {
				if !errors.Is(err, io.EOF) {
					recvErr <- err
				}
				return
			}
			recs := requestRecords(req.GetRecord(), req.GetRecords())
			if len(recs) == 0 {
				recvErr <- invalid(fieldViolation{"record", fmt.Sprintf("message %d of the stream carries no record", n+1)})
				return
			}
			if err := x.srv.checkRecordsPerMessage(len(recs)); err != nil {
				recvErr <- err
				return
			}
			// A trader's stream ends at the first message holding another company's
			// record, before any record of that message is judged or written.
			if err := recordsInScope(ctx, "records", recs...); err != nil {
				recvErr <- err
				return
			}
			single := len(recs) == 1 && req.GetRecord() != nil
			for _, pb := range recs {
				select {
				case recv <- incoming{pb: pb, single: single}:
				case <-ctx.Done():
					return
				}
			}
		}
	}()

	// The writer commits batches in order and answers their records.
	var sum summary
	toWrite := make(chan []*pendingRecord)
	writeErr := make(chan error, 1)
	writerDone := make(chan struct{})
	stored := validate.NewKeyWindow[windowEntry](validate.DuplicateWindow) // the writer's: whether each key was stored
	left := streamBalances{}                                               // the writer's: what the stream's last draw left on each line
	go func() {
		defer close(writerDone)
		for batch := range toWrite {
			if err := x.srv.commit(ctx, batch, left); err != nil {
				writeErr <- err
				cancel()
				return
			}
			for _, p := range batch {
				switch {
				case p.streamDup && p.verdict.Replayed:
					// Stored if the earlier record of the stream was.
					e, _ := stored.Get(p.keyHash)
					p.recorded = e.recorded
				case p.hasKey && !p.streamDup:
					stored.Put(p.keyHash, windowEntry{recorded: p.recorded})
				}
			}
			if err := sendRecorded(stream, batch, &sum); err != nil {
				writeErr <- err
				cancel()
				return
			}
		}
	}()
	finish := func(err error) error {
		close(toWrite)
		<-writerDone
		select {
		case werr := <-writeErr:
			return werr
		default:
		}
		if err != nil {
			return err
		}
		return stream.Send(&halovetv1.RecordShipmentsResponse{Item: &halovetv1.RecordShipmentsResponse_Summary{Summary: &sum.pb}})
	}

	// Keys seen in this stream, for the same answer however the records fall into write
	// batches; bounded, like a check stream's (validate.DuplicateWindow).
	seen := validate.NewKeyWindow[windowEntry](validate.DuplicateWindow)
	var pending []*pendingRecord
	handOver := func() { pending = nil }
	for {
		var in incoming
		var open bool
		switch {
		case len(pending) >= recordFlushSize:
			select {
			case toWrite <- pending:
				handOver()
				continue
			case <-ctx.Done():
				return finish(status.FromContextError(ctx.Err()).Err())
			}
		case len(pending) > 0 && !wholeCall:
			select {
			case in, open = <-recv:
			case toWrite <- pending: // the writer is free: write what we have
				handOver()
				continue
			case <-ctx.Done():
				return finish(status.FromContextError(ctx.Err()).Err())
			}
		default:
			select {
			case in, open = <-recv:
			case <-ctx.Done():
				return finish(status.FromContextError(ctx.Err()).Err())
			}
		}
		if !open {
			select {
			case err := <-recvErr:
				return finish(err)
			default:
			}
			if len(pending) > 0 {
				select {
				case toWrite <- pending:
				case <-ctx.Done():
				}
			}
			return finish(nil)
		}
		env, err := x.srv.checkEnvFor(ctx, in.pb)
		if err != nil {
			return finish(err)
		}
		p := &pendingRecord{pb: in.pb, single: in.single, rec: recordFromProto(in.pb)}
		// Quota is judged and drawn by the store under lock, at the record's own draw, not
		// by an in-memory ledger: the check plans the draws (validate.DeferQuota), and the
		// quota findings come from the balance the store drew on.
		num := strings.TrimSpace(p.rec.LicenceNumber)
		view := pinned.View(env, num)
		p.lic, _ = view.Licence(num)
		p.verdict = validate.Check(view, &p.rec, validate.DeferQuota)
		if k := recordKey(&p.rec); k[1] != "" {
			p.keyHash, p.hasKey = seen.Hash(k[0], k[1]), true
			fp := seen.HashString(p.verdict.Fingerprint)
			if prev, dup := seen.Get(p.keyHash); dup {
				same := prev.fingerprint == fp
				earlier := ""
				if same {
					earlier = p.verdict.Fingerprint // only equality matters to DuplicateFinding
				}
				p.verdict.Add(validate.DuplicateFinding(earlier, p.verdict.Fingerprint, prev.line))
				p.verdict.Draws = nil
				p.verdict.Replayed, p.streamDup = same, true
			} else {
				seen.Put(p.keyHash, windowEntry{fingerprint: fp, line: p.rec.Line})
			}
		}
		if p.verdict.Outcome != validate.OutcomeRejected && !p.streamDup {
			p.row, p.rowErr = shipmentRow(p.pb, &p.rec, &p.verdict)
			p.row.VerdictOnStore = p.storedVerdict
		}
		pending = append(pending, p)
	}
}

// sendRecorded answers a written batch: a record that came alone in its message gets a
// lone verdict, consecutive records of multi-record messages a VerdictBatch.
func sendRecorded(stream halovetv1.ShipmentService_RecordShipmentsServer, batch []*pendingRecord, sum *summary) error {
	var group []*halovetv1.Verdict
	flushGroup := func() error {
		if len(group) == 0 {
			return nil
		}
		err := stream.Send(&halovetv1.RecordShipmentsResponse{Item: &halovetv1.RecordShipmentsResponse_Verdicts{Verdicts: &halovetv1.VerdictBatch{Verdicts: group}}})
		group = nil
		return err
	}
	for _, p := range batch {
		v := recordedVerdict(p)
		sum.addProto(v)
		if !p.single {
			group = append(group, v)
			continue
		}
		if err := flushGroup(); err != nil {
			return err
		}
		if err := stream.Send(&halovetv1.RecordShipmentsResponse{Item: &halovetv1.RecordShipmentsResponse_Verdict{Verdict: v}}); err != nil {
			return err
		}
	}
	return flushGroup()
}

func recordKey(r *validate.Record) [2]string {
	return [2]string{strings.TrimSpace(r.CompanyID), strings.TrimSpace(r.Key)}
}

// judgeByStored answers a record whose key is stored already, by what was stored: the
// same content is a replay, accepted and recorded as it was; other content (storedFP
// different, or "" when unknown) is a conflict.
func judgeByStored(p *pendingRecord, storedFP string) {
	p.verdict.Findings = nil
	p.verdict.Draws = nil
	p.verdict.Add(validate.DuplicateFinding(storedFP, p.verdict.Fingerprint, 0))
	if storedFP == p.verdict.Fingerprint {
		p.verdict.Replayed, p.recorded = true, true
	}
}

func recordedVerdict(p *pendingRecord) *halovetv1.Verdict {
	if p.answer != nil {
		return p.answer
	}
	v := verdictToProto(&p.verdict)
	v.Recorded = p.recorded
	return v
}

// storedVerdict is the record's ShipmentRow.VerdictOnStore: the verdict with the quota
// notices of its own draw, kept with the row and answered.
func (p *pendingRecord) storedVerdict(res store.RecordResult) []byte {
	v := p.verdict
	v.Findings = append([]validate.Finding(nil), p.verdict.Findings...)
	addBalanceFindings(&v, p.lic, res.Balances)
	a := verdictToProto(&v)
	a.Recorded = true
	b := encodeVerdict(a)
	withStored(a, &store.StoredRef{ID: res.ShipmentID, State: store.StateLive, RecordedAt: res.RecordedAt})
	p.answer = a
	return b
}

// replayOf answers a record by the stored version it replays: the verdict stored with it,
// unchanged but for replayed and the record's key and line as sent now. A version stored
// without a verdict (before verdicts were kept) is answered by the check, as a replay.
func replayOf(p *pendingRecord, ref *store.StoredRef) error {
	p.recorded, p.verdict.Replayed = true, true
	v, err := storedVerdict(ref.Verdict)
	if err != nil {
		return err
	}
	if v == nil {
		judgeByStored(p, p.verdict.Fingerprint)
		v = verdictToProto(&p.verdict)
	}
	v.RecordKey, v.SourceLine = p.pb.GetRecordKey(), p.pb.GetSourceLine()
	v.Recorded, v.Replayed = true, true
	withStored(v, ref)
	p.answer = v
	return nil
}

// commit writes the accepted records of a batch and folds the store's answers into
// their verdicts. Keys stored by earlier calls are looked up first, so that a retried
// batch is answered "replayed" even where a re-check would now find the quota used up.
func (s *Server) commit(ctx context.Context, batch []*pendingRecord, left streamBalances) error {
	// The recorder looks up the keys of the rows it is given. Records the checks rejected
	// may still be replays of stored ones (a retried batch whose quota is drawn by now),
	// so only their keys are looked up here.
	var probe [][2]string
	for _, p := range batch {
		// A key the database cannot hold (a NUL byte, invalid UTF-8) was never stored.
		if k := recordKey(&p.rec); !p.streamDup && p.verdict.Outcome == validate.OutcomeRejected && validate.Storable(k[0]) && validate.Storable(k[1]) {
			probe = append(probe, k)
		}
	}
	stored := map[[2]string][]store.StoredRef{}
	if len(probe) > 0 {
		var err error
		if stored, err = s.store.StoredRecords(ctx, probe); err != nil {
			return toStatus(ctx, s.log, err)
		}
	}
	var rows []store.ShipmentRow
	var idx []*pendingRecord
	for _, p := range batch {
		switch {
		case p.streamDup:
		case p.verdict.Outcome == validate.OutcomeRejected:
			if vs, ok := stored[recordKey(&p.rec)]; ok {
				if ref := matchingRef(vs, p.verdict.Fingerprint); ref != nil {
					if err := replayOf(p, ref); err != nil {
						return toStatus(ctx, s.log, err)
					}
				} else {
					judgeByStored(p, "")
				}
			}
		case p.rowErr != nil:
			return status.Errorf(codes.Internal, "record %q: %v", p.rec.Key, p.rowErr)
		default:
			rows = append(rows, p.row)
			idx = append(idx, p)
		}
	}
	if len(rows) == 0 {
		left.follow(batch, nil, nil)
		return nil
	}
	res, err := s.store.RecordShipments(ctx, rows)
	if err != nil {
		return toStatus(ctx, s.log, err)
	}
	var drawnOn []string // licences whose balances this batch changed
	for i, r := range res {
		if r.Status != store.RecordStored {
			continue
		}
		for _, d := range rows[i].Draws {
			if !slices.Contains(drawnOn, d.LicenceNumber) {
				drawnOn = append(drawnOn, d.LicenceNumber)
			}
		}
	}
	s.registerChanged(ctx, ledger.Change{Licences: drawnOn})
	for i, r := range res {
		p := idx[i]
		switch r.Status {
		case store.RecordStored:
			p.recorded = true
		case store.RecordReplayed:
			if r.Stored != nil {
				if err := replayOf(p, r.Stored); err != nil {
					return toStatus(ctx, s.log, err)
				}
			} else { // a replay of a record stored earlier in this same batch
				judgeByStored(p, p.verdict.Fingerprint)
			}
		case store.RecordKeyConflict:
			judgeByStored(p, "")
		case store.RecordQuotaShort:
			// The balance as of this record's own draw, not as the check saw it.
			p.verdict.Add(quotaShortFindings(p.lic, r, rows[i].Draws))
		case store.RecordLicenceInactive:
			msg := fmt.Sprintf("licence %s was %s on the declaration_date %s, as the register stands when this record is written; only a licence active on that day is accepted",
				r.LicenceNumber, r.Detail, rows[i].DeclarationDate.Format(dateLayout))
			switch r.Detail {
			case "missing":
				msg = fmt.Sprintf("licence %s no longer exists when this record is written", r.LicenceNumber)
			case "missing line":
				msg = fmt.Sprintf("quota line %d of licence %s no longer exists when this record is written", r.LineNumber, r.LicenceNumber)
			}
			p.verdict.Add(findingFor(validate.CodeLicenceInactive, "licence_number", msg))
		case store.RecordYearClosed:
			p.verdict.Add(findingFor(validate.CodeYearClosed, "declaration_date", fmt.Sprintf(
				"reporting year %d is closed (since %s: %s); nothing declared in it is recorded until it is reopened",
				r.Closed.Year, rfc3339(r.Closed.ClosedAt), r.Closed.Reason)))
		}
	}
	left.follow(batch, idx, res)
	return nil
}

// streamBalances is what a recording stream's stored records left on each quota line, as
// of their own draws: a record the checks rejected gets the quota findings a check of the
// stream would give it (a check counts the stream's earlier accepted records), judged
// against that balance.
type streamBalances map[[2]string]store.Nano

func lineOf(licence string, line int) [2]string { return [2]string{licence, strconv.Itoa(line)} }

// follow walks a written batch in order: stored records move the balances, rejected ones
// are judged against them.
func (left streamBalances) follow(batch []*pendingRecord, idx []*pendingRecord, res []store.RecordResult) {
	resultOf := make(map[*pendingRecord]store.RecordResult, len(idx))
	for i, p := range idx {
		resultOf[p] = res[i]
	}
	for _, p := range batch {
		if r, ok := resultOf[p]; ok {
			if r.Status == store.RecordStored {
				for _, b := range r.Balances {
					left[lineOf(b.LicenceNumber, b.LineNumber)] = b.After
				}
			}
			continue
		}
		if p.streamDup || p.recorded || p.answer != nil || p.verdict.Outcome != validate.OutcomeRejected {
			continue
		}
		lic := p.lic
		if lic == nil || !p.verdict.Resolved || p.verdict.Figures.NetMassKg <= 0 || p.rec.Direction == terms.DirectionTransit {
			continue
		}
		draws, _ := validate.PlanDraws(lic, p.verdict.Figures, p.rec.Purpose)
		var fs []validate.Finding
		for _, d := range draws {
			line := quotaLine(lic, d.LineNumber)
			used := line.Drawn
			if l, ok := left[lineOf(lic.Number, d.LineNumber)]; ok {
				used = line.Allocated - l.Float()
			}
			fs = append(fs, validate.QuotaFindings(lic.Number, line, line.Allocated, used, d.Amount)...)
		}
		if len(fs) > 0 {
			p.verdict.Add(fs...)
		}
	}
}
