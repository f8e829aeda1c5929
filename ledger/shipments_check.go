package ledger

import (
	"context"
	"errors"
	"fmt"
	"io"

	"github.com/halovet/halovet/validate"
)

// Ready fails when no check can run on the register as it stands (the error wraps
// ErrNotConfigured), so that a stream fails before any record is read.
func (s *Shipments) Ready(ctx context.Context) error {
	_, err := s.env.Current(ctx)
	return err
}

// CheckOne checks one record against the register as it stands; nothing is stored. A
// record recorded already is answered by what was recorded.
func (s *Shipments) CheckOne(ctx context.Context, who Caller, r validate.Record) (Answer, error) {
	one := []validate.Record{r}
	env, err := s.envFor(ctx, who, one)
	if err != nil {
		return Answer{}, err
	}
	known, err := s.storedFor(ctx, s.lookup.StoredRecords, one)
	if err != nil {
		return Answer{}, err
	}
	if a, ok, err := known.answer(s.codec, 0, env, &one[0]); ok || err != nil {
		return a, err
	}
	// Not stored: nothing needs the record's fingerprint.
	return Answer{Verdict: validate.CheckUnkeyed(env, &one[0], validate.NewMemoryLedger())}, nil
}

// storedRecords is what the register holds of the keys of the records of one check
// message: every stored version, by the record's index.
type storedRecords map[int][]StoredRef

// storedFor looks up, with lookup, the stored versions of the records' company and key. A
// check answers a record recorded already by what was recorded, and does not count its
// draws again (they are in the balance already).
func (s *Shipments) storedFor(ctx context.Context, lookup func(context.Context, [][2]string) (map[[2]string][]StoredRef, error),
	recs []validate.Record) (storedRecords, error) {
	var keys [][2]string
	var at []int
	for i := range recs {
		k := recordKey(&recs[i])
		if k[0] == "" || k[1] == "" || !validate.Storable(k[0]) || !validate.Storable(k[1]) {
			continue
		}
		keys = append(keys, k)
		at = append(at, i)
	}
	if len(keys) == 0 {
		return nil, nil
	}
	m, err := lookup(ctx, keys)
	if err != nil {
		return nil, err
	}
	out := storedRecords{}
	for j, i := range at {
		if vs, ok := m[keys[j]]; ok {
			out[i] = vs
		}
	}
	return out, nil
}

// answer is the check-mode verdict of record i when its key is stored (validate.MatchKey
// against the stored versions): the verdict kept with the version of the same content,
// marked replayed and with a notice saying when it was recorded; or, for other content
// under a stored key, the check with the conflict (a stored record is changed by
// CorrectShipment). false: the key is not stored.
func (k storedRecords) answer(codec VerdictCodec, i int, env *validate.Env, r *validate.Record) (Answer, bool, error) {
	vs := k[i]
	if len(vs) == 0 { // the key is not stored: no fingerprint needed
		return Answer{}, false, nil
	}
	m, at := validate.MatchKey(vs, refFingerprint, validate.Fingerprint(r))
	switch m {
	case validate.KeyReplay:
		ref := vs[at]
		a := Answer{Recorded: true, Replayed: true, Stored: &ref, Notice: &validate.Finding{Code: validate.CodeDupReplay, Severity: validate.SeverityNotice,
			Message: fmt.Sprintf("recorded already (version %d, %s; shipment_id and recorded_at say which and when); its draws are in the balance and not counted again",
				ref.Version, ref.State)}}
		if kept, err := codec.Decode(ref.Verdict); err == nil && kept != nil {
			a.Verdict, a.Kept = kept.Verdict, kept.Wire
		} else { // none kept, or unreadable: answered by the check
			a.Verdict = validate.Check(env, r, nil)
			a.Verdict.Draws = nil
		}
		a.Verdict.RecordKey, a.Verdict.Line = r.Key, r.Line
		return a, true, nil
	}
	cur := vs[at]
	cv := validate.Check(env, r, nil)
	cv.Add(findingFor(validate.CodeDupKeyConflict, "", fmt.Sprintf(
		"the key is recorded already (%s) with different content; a recorded shipment is changed by CorrectShipment ('halovet shipments correct'), a new record needs a new key",
		cur.State)))
	return Answer{Verdict: cv, Stored: &cur}, true, nil
}

// CheckStream checks a stream in order; earlier accepted records of the stream draw on
// the quota the later ones are checked against. Nothing is stored. Each message is judged
// against the register as it stands when it is judged: a stream open for hours sees
// licence and party changes made meanwhile.
//
// Three stages overlap: receiving (and decoding) the next message, checking the current
// one (in order: the quota ledger and the duplicate keys depend on it), and encoding and
// sending the previous answers. Each hand-over holds at most a few messages, so memory
// stays bounded however long the stream is. The error is the stream's (Recv, Send), a
// message's refusal (Message.Err), a FieldError, the register's, or ctx's.
func (s *Shipments) CheckStream(ctx context.Context, who Caller, stream VerdictStream) error {
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	// The environment is read at the start, so that a register that cannot be checked
	// against fails the call before any record is read.
	env, err := s.env.Current(ctx)
	if err != nil {
		return err
	}
	type checked struct {
		answers []Answer
		single  bool
	}
	// A message is received with the stored versions of its keys, looked up by the
	// receiver (after the message arrived, while the checker works on the one before), so
	// that the lookup's round trip is off the checker's path.
	type received struct {
		m       Message
		known   storedRecords
		lookErr error
	}
	reqs := make(chan received, 4)
	answers := make(chan checked, 4)
	var recvErr, sendErr error
	recvFailed := make(chan error, 1) // recvErr, for the checker that stops on the cancel
	recvDone, sendDone := make(chan struct{}), make(chan struct{})
	go func() { // receive
		defer close(recvDone)
		defer close(reqs)
		for {
			m, err := stream.Recv()
			if err != nil {
				if !errors.Is(err, io.EOF) {
					recvErr = err
					recvFailed <- err
					cancel()
				}
				return
			}
			r := received{m: m}
			if m.Err == nil {
				r.known, r.lookErr = s.storedFor(ctx, s.reg.StoredRecords, m.Records)
			}
			select {
			case reqs <- r:
			case <-ctx.Done():
				return
			}
		}
	}()
	go func() { // send
		defer close(sendDone)
		for a := range answers {
			if err := stream.Send(a.answers, a.single); err != nil {
				sendErr = err
				cancel()
				for range answers { // let the checker finish
				}
				return
			}
		}
	}()

	batch := validate.NewBatch(env)
	var sum Summary
	var checkErr error
	drained := false // the receiver has finished: the client closed its side, or Recv failed
check:
	for {
		var r received
		var ok bool
		select {
		case r, ok = <-reqs:
		case <-ctx.Done():
			break check
		}
		if !ok {
			drained = true
			break
		}
		m := r.m
		if m.Err != nil {
			checkErr = m.Err
			break
		}
		if r.lookErr != nil {
			checkErr = r.lookErr
			break
		}
		var out []Answer
		if out, checkErr = s.checkMessage(ctx, who, batch, m, r.known); checkErr != nil {
			break
		}
		for i := range out {
			sum.Add(&out[i])
		}
		select {
		case answers <- checked{answers: out, single: m.Single}:
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
		return ctx.Err()
	}
	<-recvDone
	if recvErr != nil {
		return recvErr
	}
	return stream.Close(sum)
}

// checkMessage checks the records of one message against the register as it stands now;
// known are the stored versions of its keys, looked up after the message arrived.
// Records already recorded are answered by what was recorded; the others are checked on
// every core (Batch.CheckAll: the same verdicts as one at a time; quota and keys are
// settled in order).
func (s *Shipments) checkMessage(ctx context.Context, who Caller, batch *validate.Batch, m Message, known storedRecords) ([]Answer, error) {
	recs := m.Records
	env, err := s.envFor(ctx, who, recs)
	if err != nil {
		return nil, err
	}
	batch.SetEnv(env)
	out := make([]Answer, len(recs))
	rs := make([]validate.Record, 0, len(recs))
	at := make([]int, 0, len(recs))
	for i := range recs {
		if a, ok, err := known.answer(s.codec, i, env, &recs[i]); err != nil {
			return nil, err
		} else if ok {
			out[i] = a
			continue
		}
		rs = append(rs, recs[i])
		at = append(at, i)
	}
	checked := make([]validate.Verdict, len(rs))
	batch.CheckAll(rs, checked)
	for k, i := range at {
		out[i] = Answer{Verdict: checked[k]}
	}
	return out, nil
}
