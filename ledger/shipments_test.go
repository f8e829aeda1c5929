package ledger_test

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"github.com/halovet/halovet/terms"
	"io"
	"slices"
	"sync"
	"testing"
	"time"

	"github.com/halovet/halovet/ledger"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/validate"
)

// The shipment workflows without a server: the register of licences and parties is the
// INVENTED one of checkenv_test.go (XA reporting, Article 5; XB non-Article 5; licence
// XA-IMP-1 of XA-CO-1 for imports, 1 ODP t on an Annex C/I line); 100 kg of HCFC-22 draw
// 0.0055 ODP t (ODP 0.055, Montreal Protocol Annex C). The register of shipments is a fake
// in memory that keeps rows and draws quota as the store does: one row after the other,
// against the allocation, telling replays and conflicts apart by validate.MatchKey.

// fakeShipments is a register of recorded shipments in memory over a fakeRegister's
// licences (a stored row's draw is added to the licence's drawn amount).
type fakeShipments struct {
	reg *fakeRegister

	mu      sync.Mutex
	nextID  int64
	keys    map[[2]string][]ledger.StoredRef
	written int   // rows stored
	calls   int   // RecordShipments calls
	fail    error // RecordShipments fails with it when set
	closed  map[int]bool
}

func newFakeShipments(reg *fakeRegister) *fakeShipments {
	return &fakeShipments{reg: reg, nextID: 100, keys: map[[2]string][]ledger.StoredRef{}}
}

func (f *fakeShipments) StoredRecords(_ context.Context, keys [][2]string) (map[[2]string][]ledger.StoredRef, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	out := map[[2]string][]ledger.StoredRef{}
	for _, k := range keys {
		if vs, ok := f.keys[k]; ok {
			out[k] = slices.Clone(vs)
		}
	}
	return out, nil
}

func (f *fakeShipments) RecordShipments(_ context.Context, rows []ledger.ShipmentRow) ([]ledger.RecordResult, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.calls++
	if f.fail != nil {
		return nil, f.fail
	}
	out := make([]ledger.RecordResult, len(rows))
	for i, r := range rows {
		k := [2]string{r.CompanyID, r.RecordKey}
		vs := f.keys[k]
		switch m, at := validate.MatchKey(vs, func(v ledger.StoredRef) string { return v.Fingerprint }, r.Fingerprint); m {
		case validate.KeyReplay:
			out[i] = ledger.RecordResult{Status: ledger.RecordReplayed, ShipmentID: vs[at].ID, Stored: &vs[at]}
			continue
		case validate.KeyConflict:
			out[i] = ledger.RecordResult{Status: ledger.RecordKeyConflict, ShipmentID: vs[at].ID, Stored: &vs[at]}
			continue
		}
		res := ledger.RecordResult{Status: ledger.RecordStored, RecordedAt: day("2026-07-01")}
		f.reg.mu.Lock()
		short := false
		for _, d := range r.Draws {
			lic := f.reg.licences[d.LicenceNumber]
			for _, q := range lic.QuotaLines {
				if q.LineNumber != d.LineNumber {
					continue
				}
				left := ledger.ToNano(q.Allocated) - ledger.ToNano(q.Drawn)
				if d.Amount > left {
					res = ledger.RecordResult{Status: ledger.RecordQuotaShort, LicenceNumber: d.LicenceNumber, LineNumber: d.LineNumber, Remaining: left}
					short = true
					break
				}
				res.Balances = append(res.Balances, ledger.LineBalance{LicenceNumber: d.LicenceNumber, LineNumber: d.LineNumber,
					Allocated: ledger.ToNano(q.Allocated), Before: left, After: left - d.Amount})
			}
		}
		if !short {
			for _, d := range r.Draws {
				lic := f.reg.licences[d.LicenceNumber]
				lic.QuotaLines = slices.Clone(lic.QuotaLines)
				for j := range lic.QuotaLines {
					if lic.QuotaLines[j].LineNumber == d.LineNumber {
						lic.QuotaLines[j].Drawn += d.Amount.Float()
					}
				}
				f.reg.licences[d.LicenceNumber] = lic
			}
		}
		f.reg.mu.Unlock()
		if short {
			out[i] = res
			continue
		}
		f.nextID++
		res.ShipmentID = f.nextID
		var kept []byte
		if r.VerdictOnStore != nil {
			kept = r.VerdictOnStore(res)
		}
		f.keys[k] = append(vs, ledger.StoredRef{ID: res.ShipmentID, Fingerprint: r.Fingerprint, State: ledger.StateLive, Version: 1, RecordedAt: res.RecordedAt, Verdict: kept})
		f.written++
		out[i] = res
	}
	return out, nil
}

func (f *fakeShipments) LiveShipment(_ context.Context, company, key string) (int64, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	for _, v := range f.keys[[2]string{company, key}] {
		if v.State == ledger.StateLive {
			return v.ID, nil
		}
	}
	return 0, nil
}

var errNoShipment = errors.New("no such shipment")

func (f *fakeShipments) Shipment(_ context.Context, id int64) (ledger.Shipment, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	for k, vs := range f.keys {
		for _, v := range vs {
			if v.ID == id {
				return ledger.Shipment{ID: id, CompanyID: k[0], RecordKey: k[1], Fingerprint: v.Fingerprint, State: v.State}, nil
			}
		}
	}
	return ledger.Shipment{}, errNoShipment
}

func (f *fakeShipments) CorrectShipment(context.Context, int64, ledger.ShipmentRow, string) (ledger.RecordResult, error) {
	return ledger.RecordResult{}, errors.New("fakeShipments: corrections are not kept")
}

func (f *fakeShipments) VoidShipment(_ context.Context, id int64, _ string) (ledger.Shipment, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	for k, vs := range f.keys {
		for i := range vs {
			if vs[i].ID == id && vs[i].State == ledger.StateLive {
				vs[i].State = ledger.StateVoided
				return ledger.Shipment{ID: id, CompanyID: k[0], RecordKey: k[1], State: ledger.StateVoided}, nil
			}
		}
	}
	return ledger.Shipment{}, errNoShipment
}

func (f *fakeShipments) CloseYear(_ context.Context, year int, reason string) (ledger.ClosedYear, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	if f.closed == nil {
		f.closed = map[int]bool{}
	}
	if f.closed[year] {
		return ledger.ClosedYear{}, fmt.Errorf("year %d: %w", year, ledger.ErrYearState)
	}
	f.closed[year] = true
	return ledger.ClosedYear{Year: year, Reason: reason}, nil
}

func (f *fakeShipments) ReopenYear(_ context.Context, year int, _ string) error {
	f.mu.Lock()
	defer f.mu.Unlock()
	if !f.closed[year] {
		return fmt.Errorf("year %d: %w", year, ledger.ErrYearState)
	}
	delete(f.closed, year)
	return nil
}

// jsonCodec keeps verdicts as JSON: a domain encoding, as the wire layer keeps its own.
type jsonCodec struct{}

func (jsonCodec) Encode(v *validate.Verdict) []byte {
	b, err := json.Marshal(v)
	if err != nil {
		panic(err)
	}
	return b
}

func (jsonCodec) Decode(b []byte) (*ledger.KeptVerdict, error) {
	if b == nil {
		return nil, nil
	}
	var v validate.Verdict
	if err := json.Unmarshal(b, &v); err != nil {
		return nil, err
	}
	return &ledger.KeptVerdict{Verdict: v, Wire: b}, nil
}

// chanStream is a stream whose messages the test sends one at a time, reading the answers
// as they come.
type chanStream struct {
	in      chan ledger.Message
	answers chan []ledger.Answer
	summary chan ledger.Summary
}

func newChanStream() *chanStream {
	return &chanStream{in: make(chan ledger.Message), answers: make(chan []ledger.Answer, 100), summary: make(chan ledger.Summary, 1)}
}

func (s *chanStream) Recv() (ledger.Message, error) {
	m, ok := <-s.in
	if !ok {
		return ledger.Message{}, io.EOF
	}
	return m, nil
}

func (s *chanStream) Send(as []ledger.Answer, _ bool) error {
	s.answers <- slices.Clone(as)
	return nil
}

func (s *chanStream) Close(sum ledger.Summary) error {
	s.summary <- sum
	return nil
}

// send sends one message of the records and waits for as many answers.
func (s *chanStream) send(t *testing.T, recs ...validate.Record) []ledger.Answer {
	t.Helper()
	m := ledger.Message{Single: len(recs) == 1, Records: recs,
		Encode: func(i int) ([]byte, error) { return json.Marshal(recs[i]) }}
	s.in <- m
	var out []ledger.Answer
	for len(out) < len(recs) {
		select {
		case as := <-s.answers:
			out = append(out, as...)
		case <-time.After(10 * time.Second):
			t.Fatalf("no answer within 10 s (%d of %d)", len(out), len(recs))
		}
	}
	return out
}

type workflow struct {
	reg   *fakeRegister
	ships *fakeShipments
	env   *ledger.EnvHolder
	s     *ledger.Shipments
}

func newWorkflow(t *testing.T) *workflow {
	reg := newFakeRegister()
	w := &workflow{reg: reg, ships: newFakeShipments(reg), env: holder(t, reg)}
	w.s = ledger.NewShipments(w.env, w.ships, jsonCodec{}, ledger.ShipmentOptions{})
	return w
}

// open starts a stream (recording, or checking) and returns it with the channel its
// result arrives on.
func (w *workflow) open(who ledger.Caller, record bool) (*chanStream, chan error) {
	s := newChanStream()
	done := make(chan error, 1)
	go func() {
		if record {
			done <- w.s.RecordStream(context.Background(), who, s, false)
		} else {
			done <- w.s.CheckStream(context.Background(), who, s)
		}
	}()
	return s, done
}

func closeStream(t *testing.T, s *chanStream, done chan error) ledger.Summary {
	t.Helper()
	close(s.in)
	if err := <-done; err != nil {
		t.Fatalf("stream ended with %v", err)
	}
	return <-s.summary
}

func answerCodes(a ledger.Answer) []string {
	c := codes(a.Verdict)
	if a.Notice != nil {
		c = append(c, a.Notice.Code)
	}
	return c
}

func TestRecordStreamStoresReplaysAndRefusesAConflict(t *testing.T) {
	w := newWorkflow(t)
	s, done := w.open(ledger.Caller{}, true)
	first := s.send(t, hcfc22("K-1"))[0]
	if !first.Recorded || first.Verdict.Outcome == validate.OutcomeRejected || first.Stored == nil {
		t.Fatalf("first record: recorded %v, %v %v, stored %v; want recorded with its shipment", first.Recorded, first.Verdict.Outcome, answerCodes(first), first.Stored)
	}
	again := s.send(t, hcfc22("K-1"))[0]
	if !again.Recorded || !again.Verdict.Replayed || !slices.Contains(answerCodes(again), validate.CodeDupReplay) {
		t.Errorf("same key, same content: recorded %v replayed %v %v; want a recorded replay with DUP_REPLAY", again.Recorded, again.Verdict.Replayed, answerCodes(again))
	}
	other := hcfc22("K-1")
	other.TotalQuantity = "200"
	conflict := s.send(t, other)[0]
	if conflict.Recorded || conflict.Verdict.Outcome != validate.OutcomeRejected || !slices.Contains(answerCodes(conflict), validate.CodeDupKeyConflict) {
		t.Errorf("same key, other content: recorded %v, %v %v; want rejected with DUP_KEY_CONFLICT", conflict.Recorded, conflict.Verdict.Outcome, answerCodes(conflict))
	}
	sum := closeStream(t, s, done)
	if sum.Records != 3 || sum.Recorded != 1 || sum.Replayed != 1 || sum.Rejected != 1 {
		t.Errorf("summary %+v; want 3 records, 1 recorded, 1 replayed, 1 rejected", sum)
	}
	if w.ships.written != 1 {
		t.Errorf("%d rows written; want 1", w.ships.written)
	}
	// 100 kg of HCFC-22 at ODP 0.055 draw 0.0055 ODP t (Montreal Protocol Annex C).
	if got := w.reg.licences["XA-IMP-1"].QuotaLines[0].Drawn; got < 0.00549 || got > 0.00551 {
		t.Errorf("drawn on XA-IMP-1 line 1: %v; want 0.0055 ODP t", got)
	}
}

func TestARetriedStreamIsAnsweredByTheKeptVerdict(t *testing.T) {
	w := newWorkflow(t)
	s, done := w.open(ledger.Caller{}, true)
	first := s.send(t, hcfc22("K-1"))[0]
	closeStream(t, s, done)

	s, done = w.open(ledger.Caller{}, true)
	retry := s.send(t, hcfc22("K-1"))[0]
	sum := closeStream(t, s, done)
	kept, ok := retry.Kept.([]byte)
	if !ok || len(kept) == 0 {
		t.Fatalf("retry answered without the kept verdict (Kept %T)", retry.Kept)
	}
	if !retry.Recorded || !retry.Replayed || retry.Stored == nil || retry.Stored.ID != first.Stored.ID {
		t.Errorf("retry: recorded %v replayed %v stored %+v; want a replay of shipment %d", retry.Recorded, retry.Replayed, retry.Stored, first.Stored.ID)
	}
	if sum.Replayed != 1 || sum.Recorded != 0 {
		t.Errorf("summary %+v; want 1 replayed, 0 newly recorded", sum)
	}
	if w.ships.written != 1 {
		t.Errorf("%d rows written; want 1 (the retry is not stored again)", w.ships.written)
	}
}

// amend changes licence XA-IMP-1 in the register and announces it, as the register's
// notification does on every replica.
func (w *workflow) amend(t *testing.T, fn func(l *validate.Licence)) {
	t.Helper()
	w.reg.update(func(f *fakeRegister) {
		l := f.licences["XA-IMP-1"]
		l.QuotaLines = slices.Clone(l.QuotaLines)
		l.Directions = slices.Clone(l.Directions)
		fn(&l)
		f.licences["XA-IMP-1"] = l
	})
	if err := w.env.Refresh(context.Background(), ledger.Change{Licences: []string{"XA-IMP-1"}}); err != nil {
		t.Fatal(err)
	}
}

func TestAnOpenRecordingStreamJudgesOnTheAmendedLicence(t *testing.T) {
	cases := []struct {
		name  string
		amend func(l *validate.Licence)
		code  string
	}{
		{"direction", func(l *validate.Licence) { l.Directions = []terms.Direction{terms.DirectionExport} }, validate.CodeLicenceDirection},
		{"company", func(l *validate.Licence) { l.CompanyID = "XA-CO-9" }, validate.CodeLicenceCompany},
		{"validity", func(l *validate.Licence) { l.ValidTo = day("2026-03-31") }, validate.CodeLicenceExpired},
		// HCFC-22 is Annex C Group I; a line for Annex A Group I (CFCs) does not cover it.
		{"scope", func(l *validate.Licence) { l.QuotaLines[0].Group = substances.GroupAI }, validate.CodeLicenceScope},
		{"status", func(l *validate.Licence) { l.Status = terms.LicenceSuspended }, validate.CodeLicenceInactive},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			w := newWorkflow(t)
			s, done := w.open(ledger.Caller{}, true)
			if a := s.send(t, hcfc22("K-1"))[0]; !a.Recorded {
				t.Fatalf("before the amendment: %v, not recorded", answerCodes(a))
			}
			w.amend(t, c.amend)
			a := s.send(t, hcfc22("K-2"))[0]
			if a.Recorded || a.Verdict.Outcome != validate.OutcomeRejected || !slices.Contains(answerCodes(a), c.code) {
				t.Errorf("after the amendment: recorded %v, %v %v; want rejected with %s", a.Recorded, a.Verdict.Outcome, answerCodes(a), c.code)
			}
			closeStream(t, s, done)
			if w.ships.written != 1 {
				t.Errorf("%d rows written; want 1", w.ships.written)
			}
		})
	}
}

func TestAnOpenCheckStreamJudgesOnTheChangedParty(t *testing.T) {
	w := newWorkflow(t)
	s, done := w.open(ledger.Caller{}, false)
	for _, a := range s.send(t, hcfc22("K-1"), hcfc22("K-2")) {
		if a.Verdict.Outcome != validate.OutcomeAccepted {
			t.Fatalf("before the change: %v %v; want accepted", a.Verdict.Outcome, answerCodes(a))
		}
	}
	w.reg.update(func(f *fakeRegister) {
		f.parties[1].Settings = validate.PartySettings{Type: terms.PartyTypeNonParty, Known: true}
	})
	if err := w.env.Refresh(context.Background(), ledger.Change{Parties: true}); err != nil {
		t.Fatal(err)
	}
	for _, a := range s.send(t, hcfc22("K-3"), hcfc22("K-4")) {
		if !slices.Contains(answerCodes(a), validate.CodePartnerNonParty) {
			t.Errorf("after XB became a non-party: %v; want PARTNER_NON_PARTY", answerCodes(a))
		}
	}
	sum := closeStream(t, s, done)
	if sum.Records != 4 || sum.Recorded != 0 {
		t.Errorf("summary %+v; want 4 records, none recorded", sum)
	}
	if w.ships.calls != 0 {
		t.Errorf("a check stream wrote to the register %d times", w.ships.calls)
	}
}

func TestACheckAnswersARecordedKeyByTheRegister(t *testing.T) {
	w := newWorkflow(t)
	s, done := w.open(ledger.Caller{}, true)
	s.send(t, hcfc22("K-1"))
	closeStream(t, s, done)

	ctx := context.Background()
	same, err := w.s.CheckOne(ctx, ledger.Caller{}, hcfc22("K-1"))
	if err != nil {
		t.Fatal(err)
	}
	if !same.Recorded || !same.Replayed || same.Kept == nil || same.Notice == nil || same.Notice.Code != validate.CodeDupReplay {
		t.Errorf("recorded record checked again: recorded %v replayed %v kept %v notice %v; want the kept verdict with DUP_REPLAY", same.Recorded, same.Replayed, same.Kept != nil, same.Notice)
	}
	other := hcfc22("K-1")
	other.TotalQuantity = "300"
	diff, err := w.s.CheckOne(ctx, ledger.Caller{}, other)
	if err != nil {
		t.Fatal(err)
	}
	if diff.Recorded || diff.Verdict.Outcome != validate.OutcomeRejected || !slices.Contains(codes(diff.Verdict), validate.CodeDupKeyConflict) || diff.Stored == nil {
		t.Errorf("other content under the recorded key: %v %v stored %v; want rejected with DUP_KEY_CONFLICT naming the shipment", diff.Verdict.Outcome, codes(diff.Verdict), diff.Stored)
	}
	fresh, err := w.s.CheckOne(ctx, ledger.Caller{}, hcfc22("K-9"))
	if err != nil {
		t.Fatal(err)
	}
	if fresh.Recorded || fresh.Kept != nil || fresh.Verdict.Outcome != validate.OutcomeAccepted {
		t.Errorf("a new key: %v %v recorded %v; want accepted, not recorded", fresh.Verdict.Outcome, codes(fresh.Verdict), fresh.Recorded)
	}
}

func TestATraderIsRefusedAnotherCompanysLicence(t *testing.T) {
	w := newWorkflow(t)
	r := hcfc22("K-1")
	r.CompanyID = "XA-CO-2"
	_, err := w.s.CheckOne(context.Background(), ledger.Caller{Company: "XA-CO-2", Scoped: true}, r)
	var fe *ledger.FieldError
	if !errors.As(err, &fe) || fe.Kind != ledger.Denied || fe.Violations[0].Field != "record.licence_number" {
		t.Fatalf("trader of XA-CO-2 naming XA-CO-1's licence: %v; want a Denied FieldError on record.licence_number", err)
	}
}

func TestARefusedMessageEndsTheStreamAfterTheEarlierAnswers(t *testing.T) {
	w := newWorkflow(t)
	s, done := w.open(ledger.Caller{}, true)
	if a := s.send(t, hcfc22("K-1"))[0]; !a.Recorded {
		t.Fatalf("first record not recorded: %v", answerCodes(a))
	}
	refusal := errors.New("message 2 carries no record")
	s.in <- ledger.Message{Err: refusal}
	if err := <-done; !errors.Is(err, refusal) {
		t.Errorf("stream ended with %v; want the message's refusal", err)
	}
}

func TestARegisterFailureEndsTheRecordingStreamWithIt(t *testing.T) {
	w := newWorkflow(t)
	lost := errors.New("database connection lost")
	w.ships.fail = lost
	s, done := w.open(ledger.Caller{}, true)
	s.in <- ledger.Message{Single: true, Records: []validate.Record{hcfc22("K-1")}, Encode: func(int) ([]byte, error) { return []byte("{}"), nil }}
	select {
	case err := <-done:
		if !errors.Is(err, lost) {
			t.Errorf("stream ended with %v; want the register's error, unchanged for the wire layer to classify", err)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("stream did not end within 10 s")
	}
}

func TestCorrectionRefusals(t *testing.T) {
	w := newWorkflow(t)
	s, done := w.open(ledger.Caller{}, true)
	first := s.send(t, hcfc22("K-1"))[0]
	closeStream(t, s, done)
	ctx := context.Background()
	kind := func(err error) ledger.ErrorKind {
		var fe *ledger.FieldError
		if errors.As(err, &fe) {
			return fe.Kind
		}
		return 0
	}
	correction := func(id int64, r validate.Record) ledger.Correction {
		return ledger.Correction{ShipmentID: id, Record: r, Encode: func() ([]byte, error) { return json.Marshal(r) }, Reason: "test"}
	}
	if _, err := w.s.CorrectShipment(ctx, ledger.Caller{}, correction(0, hcfc22("K-1"))); kind(err) != ledger.Invalid {
		t.Errorf("a correction with the recorded content: %v; want Invalid", err)
	}
	if _, err := w.s.CorrectShipment(ctx, ledger.Caller{}, correction(0, hcfc22("K-404"))); kind(err) != ledger.NotFound {
		t.Errorf("a correction of a key never recorded: %v; want NotFound", err)
	}
	other := hcfc22("K-2")
	other.TotalQuantity = "50"
	if _, err := w.s.CorrectShipment(ctx, ledger.Caller{}, correction(first.Stored.ID, other)); kind(err) != ledger.Invalid {
		t.Errorf("a correction changing the key: %v; want Invalid", err)
	}
	if _, err := w.s.VoidShipment(ctx, first.Stored.ID, "test"); err != nil {
		t.Fatal(err)
	}
	changed := hcfc22("K-1")
	changed.TotalQuantity = "50"
	if _, err := w.s.CorrectShipment(ctx, ledger.Caller{}, correction(first.Stored.ID, changed)); kind(err) != ledger.Refused {
		t.Errorf("a correction of a voided shipment: %v; want Refused", err)
	}
}

func TestClosingAYearTwiceAndReopeningAnOpenOneAreRefused(t *testing.T) {
	w := newWorkflow(t)
	ctx := context.Background()
	if _, err := w.s.CloseYear(ctx, 2025, "reported"); err != nil {
		t.Fatal(err)
	}
	var fe *ledger.FieldError
	if _, err := w.s.CloseYear(ctx, 2025, "again"); !errors.As(err, &fe) || fe.Kind != ledger.Refused || fe.Violations[0].Field != "year" {
		t.Errorf("closing 2025 again: %v; want a Refused FieldError on year", err)
	}
	if err := w.s.ReopenYear(ctx, 2024, "never closed"); !errors.As(err, &fe) || fe.Kind != ledger.Refused {
		t.Errorf("reopening 2024, never closed: %v; want a Refused FieldError", err)
	}
	if err := w.s.ReopenYear(ctx, 2025, "a correction is due"); err != nil {
		t.Errorf("reopening 2025: %v", err)
	}
}
