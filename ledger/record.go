package ledger

import (
	"context"
	"errors"
	"fmt"
	"github.com/halovet/halovet/terms"
	"io"
	"strconv"
	"strings"

	"github.com/halovet/halovet/validate"
)

// pendingRecord is a checked record waiting to be written.
type pendingRecord struct {
	in       incoming
	single   bool // came alone in its message: answered with a lone verdict
	rec      validate.Record
	verdict  validate.Verdict
	recorded bool
	keyHash  uint64 // hash of company and key (when the record has a key)
	hasKey   bool
	// streamDup: an earlier record of this stream had the same company and key; the
	// verdict says so (a replay, or a conflict) and the register is not asked.
	streamDup bool
	row       ShipmentRow // what is stored, built while the previous batch is written
	rowErr    error
	lic       *validate.Licence // the licence the record names, as checked
	// answer is the answer as stored (for a stored record, with the notices of its own
	// draw) or as stored earlier (a replay); nil answers verdict.
	answer *Answer
}

// windowEntry is what a recording stream keeps per key in its windows.
type windowEntry struct {
	fingerprint uint64 // hash of the record's content fingerprint
	line        int64  // the record's source line
	recorded    bool   // the record was stored
}

// incoming is record i of a stream message.
type incoming struct {
	rec    validate.Record
	encode func(i int) ([]byte, error) // the message's Encode
	i      int
	single bool
}

// ErrRecordRow is wrapped by the error for an accepted record that cannot be made into a
// row of the register (a fault, not the caller's).
var ErrRecordRow = errors.New("record cannot be stored")

// RecordStream checks each record and writes the accepted ones in batches of up to
// FlushSize, each in one transaction that draws their quota under row locks. The next
// batch is checked while the previous one is written; a batch is handed to the writer as
// soon as the writer is free, so a client that waits for its answers is never kept waiting
// for a full batch (wholeCall: records are handed over only when FlushSize are pending or
// the client has closed its side, so a call of at most FlushSize records is written in one
// transaction). Answers go back in the records' order. The register is authoritative for
// quotas and keys: a record it turns down gets the finding that says why, and the rest of
// the batch is stored. Memory is bounded: the batches in flight, and a window of the last
// validate.DuplicateWindow keys (as hashes) so that a key repeated within the stream gets
// the same answer whichever batch it falls in; keys from earlier calls are found in the
// register.
//
// Each record is judged against the licences and parties as they stand when it is judged
// (the balances as the stream first saw each licence: see WithBalancesOf).
func (s *Shipments) RecordStream(ctx context.Context, who Caller, stream VerdictStream, wholeCall bool) error {
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	// Read at the start, so that a register that cannot be checked against fails the call
	// before any record is read.
	if _, err := s.env.Current(ctx); err != nil {
		return err
	}
	var pinned PinnedBalances
	recv := make(chan incoming, s.flush)
	recvErr := make(chan error, 1)
	go func() {
		defer close(recv)
		for {
			m, err := stream.Recv()
			if err != nil {
				if !errors.Is(err, io.EOF) {
					recvErr <- err
				}
				return
			}
			if m.Err != nil {
				recvErr <- m.Err
				return
			}
			for i := range m.Records {
				select {
				case recv <- incoming{rec: m.Records[i], encode: m.Encode, i: i, single: m.Single}:
				case <-ctx.Done():
					return
				}
			}
		}
	}()

	// The writer commits batches in order and answers their records.
	var sum Summary
	toWrite := make(chan []*pendingRecord)
	writeErr := make(chan error, 1)
	writerDone := make(chan struct{})
	stored := validate.NewKeyWindow[windowEntry](validate.DuplicateWindow) // the writer's: whether each key was stored
	left := streamBalances{}                                               // the writer's: what the stream's last draw left on each line
	var answers []Answer                                                   // the writer's: reused from batch to batch
	go func() {
		defer close(writerDone)
		for batch := range toWrite {
			if err := s.commit(ctx, batch, left); err != nil {
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
			if err := sendRecorded(stream, batch, &sum, &answers); err != nil {
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
		return stream.Close(sum)
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
		case len(pending) >= s.flush:
			select {
			case toWrite <- pending:
				handOver()
				continue
			case <-ctx.Done():
				return finish(ctx.Err())
			}
		case len(pending) > 0 && !wholeCall:
			select {
			case in, open = <-recv:
			case toWrite <- pending: // the writer is free: write what we have
				handOver()
				continue
			case <-ctx.Done():
				return finish(ctx.Err())
			}
		default:
			select {
			case in, open = <-recv:
			case <-ctx.Done():
				return finish(ctx.Err())
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
		p, err := s.judge(ctx, who, &pinned, seen, in)
		if err != nil {
			return finish(err)
		}
		pending = append(pending, p)
	}
}

// judge checks one record of a recording stream against the register as it stands now,
// and against the keys seen earlier in the stream.
func (s *Shipments) judge(ctx context.Context, who Caller, pinned *PinnedBalances, seen *validate.KeyWindow[windowEntry], in incoming) (*pendingRecord, error) {
	p := &pendingRecord{in: in, single: in.single, rec: in.rec}
	env, err := s.envFor(ctx, who, []validate.Record{p.rec})
	if err != nil {
		return nil, err
	}
	// Quota is judged and drawn by the register under lock, at the record's own draw, not
	// by an in-memory ledger: the check plans the draws (validate.DeferQuota), and the
	// quota findings come from the balance the register drew on.
	num := strings.TrimSpace(p.rec.LicenceNumber)
	view := pinned.View(env, num)
	p.lic, _ = view.Licence(num)
	p.verdict = validate.Check(view, &p.rec, validate.DeferQuota)
	if k := recordKey(&p.rec); k[1] != "" {
		p.keyHash, p.hasKey = seen.Hash(k[0], k[1]), true
		fp := seen.HashString(p.verdict.Fingerprint)
		if prev, dup := seen.Get(p.keyHash); dup {
			m, _ := validate.MatchKey([]windowEntry{prev}, func(e windowEntry) uint64 { return e.fingerprint }, fp)
			p.verdict.Add(validate.KeyFinding(m, prev.line))
			p.verdict.Draws = nil
			p.verdict.Replayed, p.streamDup = m == validate.KeyReplay, true
		} else {
			seen.Put(p.keyHash, windowEntry{fingerprint: fp, line: p.rec.Line})
		}
	}
	if p.verdict.Outcome != validate.OutcomeRejected && !p.streamDup {
		p.row, p.rowErr = shipmentRow(p.encoded, &p.rec, &p.verdict, p.lic)
		if p.lic != nil {
			p.row.LicenceVersion = p.lic.Version // written only while the licence still stands so
		}
		p.row.VerdictOnStore = func(res RecordResult) []byte { return p.storedVerdict(s.codec, res) }
	}
	return p, nil
}

// sendRecorded answers a written batch: a record that came alone in its message gets a
// lone answer, consecutive records of multi-record messages are answered together.
func sendRecorded(stream VerdictStream, batch []*pendingRecord, sum *Summary, buf *[]Answer) error {
	group := (*buf)[:0]
	defer func() { *buf = group[:0] }()
	flushGroup := func() error {
		if len(group) == 0 {
			return nil
		}
		err := stream.Send(group, false)
		group = group[:0]
		return err
	}
	for _, p := range batch {
		if !p.single {
			group = append(group, p.recordedAnswer())
			sum.Add(&group[len(group)-1])
			continue
		}
		if err := flushGroup(); err != nil {
			return err
		}
		group = append(group, p.recordedAnswer())
		sum.Add(&group[0])
		err := stream.Send(group, true)
		group = group[:0]
		if err != nil {
			return err
		}
	}
	return flushGroup()
}

// judgeByStored answers a record whose key is stored already, by what was stored: m says
// whether it is a replay (accepted and recorded as it was) or a conflict.
func judgeByStored(p *pendingRecord, m validate.KeyMatch) {
	p.verdict.Findings = nil
	p.verdict.Draws = nil
	p.verdict.Add(validate.KeyFinding(m, 0))
	if m == validate.KeyReplay {
		p.verdict.Replayed, p.recorded = true, true
	}
}

// encoded is the record as the register keeps it.
func (p *pendingRecord) encoded() ([]byte, error) {
	if p.in.encode == nil {
		return nil, errors.New("the stream gives no stored form of its records")
	}
	return p.in.encode(p.in.i)
}

func (p *pendingRecord) recordedAnswer() Answer {
	if p.answer != nil {
		return *p.answer
	}
	return Answer{Verdict: p.verdict, Recorded: p.recorded}
}

// storedVerdict is the record's ShipmentRow.VerdictOnStore: the verdict with the quota
// notices of its own draw, kept with the row and answered.
func (p *pendingRecord) storedVerdict(codec VerdictCodec, res RecordResult) []byte {
	v := p.verdict
	v.Findings = append([]validate.Finding(nil), p.verdict.Findings...)
	addBalanceFindings(&v, p.lic, res.Balances)
	p.answer = &Answer{Verdict: v, Recorded: true, Stored: &StoredRef{ID: res.ShipmentID, State: StateLive, RecordedAt: res.RecordedAt}}
	if w, ok := codec.(WireVerdictCodec); ok {
		// Answered in the form just kept: the verdict is converted once, not again to send.
		b, wire := w.EncodeWire(&v)
		p.answer.Kept = wire
		return b
	}
	return codec.Encode(&v)
}

// replayOf answers a record by the stored version it replays: the verdict kept with it,
// unchanged but for replayed and the record's key and line as sent now. A version stored
// without a verdict (before verdicts were kept) is answered by the check, as a replay.
func (p *pendingRecord) replayOf(codec VerdictCodec, ref *StoredRef) error {
	p.recorded, p.verdict.Replayed = true, true
	kept, err := codec.Decode(ref.Verdict)
	if err != nil {
		return err
	}
	a := &Answer{Recorded: true, Replayed: true, Stored: ref}
	if kept == nil {
		judgeByStored(p, validate.KeyReplay)
		a.Verdict = p.verdict
	} else {
		a.Verdict, a.Kept = kept.Verdict, kept.Wire
	}
	a.Verdict.RecordKey, a.Verdict.Line = p.rec.Key, p.rec.Line
	p.answer = a
	return nil
}

// commit writes the accepted records of a batch and folds the register's answers into
// their verdicts. Keys stored by earlier calls are looked up first, so that a retried
// batch is answered "replayed" even where a re-check would now find the quota used up.
func (s *Shipments) commit(ctx context.Context, batch []*pendingRecord, left streamBalances) error {
	// The register looks up the keys of the rows it is given. Records the checks rejected
	// may still be replays of stored ones (a retried batch whose quota is drawn by now),
	// so only their keys are looked up here.
	var probe [][2]string
	for _, p := range batch {
		// A key the database cannot hold (a NUL byte, invalid UTF-8) was never stored.
		if k := recordKey(&p.rec); !p.streamDup && p.verdict.Outcome == validate.OutcomeRejected && validate.Storable(k[0]) && validate.Storable(k[1]) {
			probe = append(probe, k)
		}
	}
	stored := map[[2]string][]StoredRef{}
	if len(probe) > 0 {
		var err error
		if stored, err = s.reg.StoredRecords(ctx, probe); err != nil {
			return err
		}
	}
	n := 0
	for _, p := range batch {
		if !p.streamDup && p.verdict.Outcome != validate.OutcomeRejected {
			n++
		}
	}
	rows := make([]ShipmentRow, 0, n)
	idx := make([]*pendingRecord, 0, n)
	for _, p := range batch {
		switch {
		case p.streamDup:
		case p.verdict.Outcome == validate.OutcomeRejected:
			vs := stored[recordKey(&p.rec)]
			switch m, at := validate.MatchKey(vs, refFingerprint, p.verdict.Fingerprint); m {
			case validate.KeyReplay:
				if err := p.replayOf(s.codec, &vs[at]); err != nil {
					return err
				}
			case validate.KeyConflict:
				judgeByStored(p, m)
			}
		case p.rowErr != nil:
			return fmt.Errorf("%w: record %q: %v", ErrRecordRow, p.rec.Key, p.rowErr)
		default:
			rows = append(rows, p.row)
			idx = append(idx, p)
		}
	}
	if len(rows) == 0 {
		left.follow(batch, nil, nil)
		return nil
	}
	res, err := s.reg.RecordShipments(ctx, rows)
	if err != nil {
		return err
	}
	var drawnOn []string // licences whose balances this batch changed
	for i, r := range res {
		if r.Status != RecordStored {
			continue
		}
		for _, d := range rows[i].Draws {
			if !contains(drawnOn, d.LicenceNumber) {
				drawnOn = append(drawnOn, d.LicenceNumber)
			}
		}
	}
	s.changed(ctx, Change{Licences: drawnOn})
	var changedLics []string // licences changed after their records were judged
	for i, r := range res {
		p := idx[i]
		switch r.Status {
		case RecordStored:
			p.recorded = true
		case RecordReplayed:
			if r.Stored != nil {
				if err := p.replayOf(s.codec, r.Stored); err != nil {
					return err
				}
			} else { // a replay of a record stored earlier in this same batch
				judgeByStored(p, validate.KeyReplay)
			}
		case RecordKeyConflict:
			judgeByStored(p, validate.KeyConflict)
		case RecordQuotaShort:
			// The balance as of this record's own draw, not as the check saw it.
			p.verdict.Add(quotaShortFinding(p.lic, r, rows[i].Draws))
		case RecordLicenceInactive:
			p.verdict.Add(inactiveFinding(r, rows[i]))
		case RecordLicenceChanged:
			p.verdict.Add(changedFinding(r, rows[i]))
			changedLics = append(changedLics, r.LicenceNumber)
		case RecordYearClosed:
			p.verdict.Add(findingFor(validate.CodeYearClosed, "declaration_date", fmt.Sprintf(
				"reporting year %d is closed (since %s: %s); nothing declared in it is recorded until it is reopened",
				r.Closed.Year, RFC3339(r.Closed.ClosedAt), r.Closed.Reason)))
		}
	}
	if len(changedLics) > 0 {
		// This replica judged on terms it had not yet caught up with: catch up now, so that
		// the records sent again are judged on the licence as it stands.
		s.changed(ctx, Change{Licences: changedLics})
	}
	left.follow(batch, idx, res)
	return nil
}

// changedFinding is the LICENCE_CHANGED finding for a row judged on a licence that was
// changed before the row could be written.
func changedFinding(r RecordResult, row ShipmentRow) validate.Finding {
	return findingFor(validate.CodeLicenceChanged, "licence_number", fmt.Sprintf(
		"licence %s was changed (now %s) after this record was judged on its version %d, so nothing was recorded for it: send it again to have it judged on the licence as it now stands",
		r.LicenceNumber, r.Detail, row.LicenceVersion))
}

// inactiveFinding is the LICENCE_INACTIVE finding for a row the register turned down.
func inactiveFinding(r RecordResult, row ShipmentRow) validate.Finding {
	msg := fmt.Sprintf("licence %s was %s on the declaration_date %s, as the register stands when this record is written; only a licence active on that day is accepted",
		r.LicenceNumber, r.Detail, row.DeclarationDate.Format(dateLayout))
	switch r.Detail {
	case "missing":
		msg = fmt.Sprintf("licence %s no longer exists when this record is written", r.LicenceNumber)
	case "missing line":
		msg = fmt.Sprintf("quota line %d of licence %s no longer exists when this record is written", r.LineNumber, r.LicenceNumber)
	}
	return findingFor(validate.CodeLicenceInactive, "licence_number", msg)
}

// streamBalances is what a recording stream's stored records left on each quota line, as
// of their own draws: a record the checks rejected gets the quota findings a check of the
// stream would give it (a check counts the stream's earlier accepted records), judged
// against that balance.
type streamBalances map[[2]string]Nano

func lineOf(licence string, line int) [2]string { return [2]string{licence, strconv.Itoa(line)} }

// follow walks a written batch in order: stored records move the balances, rejected ones
// are judged against them.
func (left streamBalances) follow(batch []*pendingRecord, idx []*pendingRecord, res []RecordResult) {
	resultOf := make(map[*pendingRecord]RecordResult, len(idx))
	for i, p := range idx {
		resultOf[p] = res[i]
	}
	for _, p := range batch {
		if r, ok := resultOf[p]; ok {
			if r.Status == RecordStored {
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
