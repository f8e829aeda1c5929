package ledger

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
	"github.com/halovet/halovet/validate"
)

// The shipment workflows: checking a stream of records, recording one, correcting and
// voiding recorded shipments. The register is read and written through ShipmentRegister;
// a verdict kept with a shipment is encoded and decoded by the caller's VerdictCodec, so
// that the ledger never needs the wire's encoding.

// Nano is an amount in billionths of its unit (tonnes, ODP tonnes or CO2-eq tonnes), as the
// register does its quota arithmetic: in integers, so that what is drawn is exactly the
// sum of the recorded draws.
type Nano int64

// ToNano rounds a float amount to the nearest billionth.
func ToNano(x float64) Nano { return Nano(math.Round(x * 1e9)) }

// Float returns the amount as a float.
func (n Nano) Float() float64 { return float64(n) / 1e9 }

// Shipment states as the register holds them.
const (
	StateLive       = "live"
	StateVoided     = "voided"
	StateSuperseded = "superseded"
)

// StoredRef is one stored version of a (company, key).
type StoredRef struct {
	ID          int64
	Fingerprint string
	State       string
	Version     int
	RecordedAt  time.Time
	Verdict     []byte // as kept (VerdictCodec's encoding); nil when none was kept
}

func refFingerprint(r StoredRef) string { return r.Fingerprint }

// Draw is what a shipment draws on one quota line, in the line's unit.
type Draw struct {
	LicenceNumber string
	LineNumber    int
	Amount        Nano
}

// ShipmentComponent is one component's computed figures.
type ShipmentComponent struct {
	Designation string
	AnnexGroup  string
	MassKg      Nano
	ODPTonnes   Nano
	CO2eTonnes  Nano
	// PartnerNonParty says whether the partner is not bound for the component's own Annex
	// group on the declaration date (Party status is per group, Article 4 para 9).
	PartnerNonParty *bool
}

// ShipmentRow is a checked, accepted shipment ready to be recorded.
type ShipmentRow struct {
	CompanyID           string
	RecordKey           string
	Fingerprint         string
	Direction           terms.Direction
	LicenceNumber       string
	PartnerCountry      string
	DeclarationDate     time.Time
	ResolvedDesignation string
	EntryKind           string
	Purpose             terms.Purpose
	Condition           terms.Condition
	NetMassKg           Nano
	ODPTonnes           Nano
	CO2eTonnes          Nano
	CountsInConsumption bool
	PartnerNonParty     bool
	RecordJSON          []byte // the record as received, in the form the register keeps
	Components          []ShipmentComponent
	Draws               []Draw
	// LicenceVersion is the version of the licence the row was judged against (0: none);
	// the register writes the row only while the licence is still at that version.
	LicenceVersion int
	// VerdictOnStore gives the verdict to keep with the row once it is known to be stored
	// (its result has the id, the time and the balances of its own draws), inside the
	// transaction that stores it: the verdict kept is the one answered.
	VerdictOnStore func(RecordResult) []byte
}

// RecordStatus is what happened to one row.
type RecordStatus int

// Outcomes of recording one row.
const (
	RecordStored          RecordStatus = iota + 1 // stored now, quota drawn
	RecordReplayed                                // an identical row was stored before
	RecordKeyConflict                             // the key was used before for other content
	RecordQuotaShort                              // a quota line has less left than the row draws
	RecordLicenceInactive                         // the licence is not active (any more), or a line is gone
	RecordYearClosed                              // the declaration date falls in a closed year
	RecordLicenceChanged                          // the licence changed after the row was judged on it
)

// LineBalance is what was left on one quota line around one row's draw.
type LineBalance struct {
	LicenceNumber string
	LineNumber    int
	Allocated     Nano
	Before        Nano
	After         Nano
}

// ClosedYear is a closed reporting year.
type ClosedYear struct {
	Year     int
	ClosedAt time.Time
	ClosedBy string
	Reason   string
}

// RecordResult tells what happened to one row.
type RecordResult struct {
	Status     RecordStatus
	ShipmentID int64
	// For RecordQuotaShort: the line and what was left on it before this row.
	LicenceNumber string
	LineNumber    int
	Remaining     Nano
	// For RecordLicenceInactive: the licence's status, "missing" or "missing line".
	Detail string
	// For RecordReplayed and RecordKeyConflict: the stored version matched (nil for a row
	// stored earlier in the same batch).
	Stored *StoredRef
	// For RecordStored: the balance of each line drawn on around this row's own draw.
	Balances []LineBalance
	// For RecordYearClosed: the closed year.
	Closed *ClosedYear
	// For RecordStored: when it was stored.
	RecordedAt time.Time
}

// Shipment is a recorded shipment as the workflows need it.
type Shipment struct {
	ID          int64
	CompanyID   string
	RecordKey   string
	Fingerprint string
	State       string
	DrawnOn     []string // the licences its draws are on, in order, each once
	// Row is the register's own row of it, handed back unopened for the caller to present.
	Row any
}

// ShipmentRegister reads and writes the register of recorded shipments. Its errors are
// handed back unchanged (the caller classifies them).
type ShipmentRegister interface {
	// StoredRecords returns every stored version of the (company, key) pairs, oldest first.
	StoredRecords(ctx context.Context, keys [][2]string) (map[[2]string][]StoredRef, error)
	// RecordShipments stores rows in one transaction, drawing their quota under row locks,
	// and says what happened to each, in order.
	RecordShipments(ctx context.Context, rows []ShipmentRow) ([]RecordResult, error)
	// LiveShipment finds the live shipment of a company and key; 0 when there is none.
	LiveShipment(ctx context.Context, company, key string) (int64, error)
	// Shipment returns a recorded shipment.
	Shipment(ctx context.Context, id int64) (Shipment, error)
	// CorrectShipment replaces live shipment id by row, giving back the old draws first.
	CorrectShipment(ctx context.Context, id int64, row ShipmentRow, reason string) (RecordResult, error)
	// VoidShipment voids live shipment id and gives back its draws.
	VoidShipment(ctx context.Context, id int64, reason string) (Shipment, error)
	// CloseYear closes a reporting year; the error wraps ErrYearState when it is closed.
	CloseYear(ctx context.Context, year int, reason string) (ClosedYear, error)
	// ReopenYear reopens a closed year; the error wraps ErrYearState when it is not closed.
	ReopenYear(ctx context.Context, year int, reason string) error
}

// ErrYearState is wrapped by a ShipmentRegister's refusal to close a year closed already,
// or to reopen one that is not closed.
var ErrYearState = errors.New("the reporting year is already so")

// KeptVerdict is a verdict read back from the register.
type KeptVerdict struct {
	// Verdict is what the ledger reads of it: outcome and findings, for the summary.
	Verdict validate.Verdict
	// Wire is the verdict in the caller's encoding, answered unchanged but for the fields
	// an Answer says (key, line, recorded, replayed, stored shipment, notice).
	Wire any
}

// VerdictCodec is how verdicts are kept with the shipments: the wire layer's encoding,
// which the ledger does not know.
type VerdictCodec interface {
	// Encode is the form verdict v of a recorded record is kept in.
	Encode(v *validate.Verdict) []byte
	// Decode reads a kept verdict back; nil, nil for nil.
	Decode(b []byte) (*KeptVerdict, error)
}

// WireVerdictCodec is a VerdictCodec that also gives the wire form of the verdict it
// keeps: a recording stream answers a record it stores with that form (Answer.Kept),
// instead of converting the verdict a second time to send it.
type WireVerdictCodec interface {
	VerdictCodec
	// EncodeWire is Encode, and the verdict in the caller's encoding (as KeptVerdict.Wire).
	EncodeWire(v *validate.Verdict) (kept []byte, wire any)
}

// Answer is the verdict given to one record of a call.
type Answer struct {
	// Verdict is the verdict; for a kept one (Kept set), what the ledger read of it, with
	// the record's key and line as sent now.
	Verdict validate.Verdict
	// Kept, when set, is answered instead of Verdict (KeptVerdict.Wire), with the fields
	// below.
	Kept     any
	Recorded bool // the record is in the register
	Replayed bool // a replay of a stored version (besides Verdict.Replayed)
	// Stored is the stored shipment the answer is about, nil when none.
	Stored *StoredRef
	// Notice is added last to the findings answered, nil when none.
	Notice *validate.Finding
}

// Summary counts the verdicts of a stream for its closing message.
type Summary struct {
	Records, Accepted, AcceptedWithWarnings, Rejected, Recorded, Replayed int64
	ErrorsByCode, WarningsByCode                                          map[string]int64
}

// Add counts one answer.
func (s *Summary) Add(a *Answer) {
	v := &a.Verdict
	s.Records++
	switch v.Outcome {
	case validate.OutcomeAccepted:
		s.Accepted++
	case validate.OutcomeAcceptedWithWarnings:
		s.AcceptedWithWarnings++
	default:
		s.Rejected++
	}
	replayed := a.Replayed || (a.Kept == nil && v.Replayed)
	if a.Recorded && !replayed {
		s.Recorded++
	}
	if replayed {
		s.Replayed++
	}
	for _, f := range v.Findings {
		switch f.Severity {
		case validate.SeverityError:
			if s.ErrorsByCode == nil {
				s.ErrorsByCode = map[string]int64{}
			}
			s.ErrorsByCode[f.Code]++
		case validate.SeverityWarning:
			if s.WarningsByCode == nil {
				s.WarningsByCode = map[string]int64{}
			}
			s.WarningsByCode[f.Code]++
		}
	}
}

// Message is one message of a stream.
type Message struct {
	Records []validate.Record
	// Encode gives record i in the form the register keeps (ShipmentRow.RecordJSON); asked
	// only for a record to be stored, so a check stream may leave it nil.
	Encode func(i int) ([]byte, error)
	// Single: the record came alone in its message and is answered alone.
	Single bool
	// Err, when set, is why the wire layer refused the message: the stream ends with it at
	// this point, after the records before it are answered.
	Err error
}

// VerdictStream is a stream of records and their answers, as the wire layer adapts it.
type VerdictStream interface {
	// Recv returns the next message; io.EOF when the client has closed its side.
	Recv() (Message, error)
	// Send answers records of a stream: one record's lone answer (single), or several. The
	// slice is the caller's again when Send returns (a recording stream reuses it).
	Send(answers []Answer, single bool) error
	// Close sends the closing summary.
	Close(Summary) error
}

// Caller is whom a call is made for, as far as the workflows care.
type Caller struct {
	// Company, when Scoped, is the one company whose records and licences the caller reaches.
	Company string
	Scoped  bool
}

// ErrorKind says how a FieldError refuses a call.
type ErrorKind int

// Kinds of refusal.
const (
	Invalid  ErrorKind = iota + 1 // the request is malformed
	Refused                       // well formed, but the register's state does not allow it
	Denied                        // the caller may not reach what the field names
	NotFound                      // what the field names does not exist
)

// Violation is one field a call is refused for, and why.
type Violation struct{ Field, Why string }

// FieldError refuses a call, naming the fields.
type FieldError struct {
	Kind       ErrorKind
	Violations []Violation
}

func (e *FieldError) Error() string {
	var b strings.Builder
	for i, v := range e.Violations {
		if i > 0 {
			b.WriteString("; ")
		}
		b.WriteString(v.Field + ": " + v.Why)
	}
	return b.String()
}

func refuse(k ErrorKind, vs ...Violation) error { return &FieldError{Kind: k, Violations: vs} }

// ShipmentOptions configure Shipments.
type ShipmentOptions struct {
	// FlushSize is how many records a recording stream gathers before it writes them in
	// one transaction (it also writes whenever the client pauses); 0 means 1000.
	FlushSize int
	// Logger receives refresh failures; nil means slog.Default().
	Logger *slog.Logger
	// LookupsInFlight is how many queries for the stored keys of concurrent unary checks
	// run at once; the calls arriving meanwhile share the next one. 0 means 2.
	LookupsInFlight int
}

// Shipments runs the shipment workflows over a check environment and a register.
type Shipments struct {
	env    *EnvHolder
	reg    ShipmentRegister
	lookup *keyLookup // the unary checks' gathered stored-key lookups
	codec  VerdictCodec
	flush  int
	log    *slog.Logger
}

// NewShipments returns the workflows over env and reg, keeping verdicts in codec's form.
func NewShipments(env *EnvHolder, reg ShipmentRegister, codec VerdictCodec, opts ShipmentOptions) *Shipments {
	if opts.FlushSize <= 0 {
		opts.FlushSize = 1000
	}
	if opts.Logger == nil {
		opts.Logger = slog.Default()
	}
	return &Shipments{env: env, reg: reg, lookup: newKeyLookup(reg, opts.LookupsInFlight), codec: codec, flush: opts.FlushSize, log: opts.Logger}
}

// FlushSize is how many records one recording transaction holds at most.
func (s *Shipments) FlushSize() int { return s.flush }

// changed brings the check environment up to a change just written, so that the next
// check here sees it; the other replicas follow the register's announcement.
func (s *Shipments) changed(ctx context.Context, c Change) {
	if err := s.env.Refresh(ctx, c); err != nil {
		s.log.Warn("check environment not refreshed after a register change; the database's announcement will bring it", "err", err)
	}
}

// envFor is the environment to judge these records against now. A licence they name that
// the snapshot does not hold may have been issued on another replica a moment ago, before
// its announcement reached this one, so it is looked up in the register first: an unknown
// licence number costs one query, a known one none. For a company-scoped caller, a record
// naming another company's licence is refused (its verdict would show that licence's
// status, validity and remaining quota).
func (s *Shipments) envFor(ctx context.Context, who Caller, recs []validate.Record) (*validate.Env, error) {
	env, err := s.env.Current(ctx)
	if err != nil {
		return nil, err
	}
	var missing []string
	for i := range recs {
		n := strings.TrimSpace(recs[i].LicenceNumber)
		if n == "" || contains(missing, n) {
			continue
		}
		if _, ok := env.Licence(n); !ok {
			missing = append(missing, n)
		}
	}
	if len(missing) > 0 {
		if err := s.env.Refresh(ctx, Change{Licences: missing}); err != nil {
			return nil, err
		}
		if env, err = s.env.Current(ctx); err != nil {
			return nil, err
		}
	}
	if !who.Scoped {
		return env, nil
	}
	for i := range recs {
		n := strings.TrimSpace(recs[i].LicenceNumber)
		if n == "" {
			continue
		}
		if lic, ok := env.Licence(n); ok && lic != nil && lic.CompanyID != who.Company {
			field := "record.licence_number"
			if len(recs) > 1 {
				field = fmt.Sprintf("records[%d].licence_number", i)
			}
			return nil, refuse(Denied, Violation{field, fmt.Sprintf("licence %s is held by another company; a trader's credential reaches its own company's licences only", n)})
		}
	}
	return env, nil
}

func contains(xs []string, x string) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}

func recordKey(r *validate.Record) [2]string {
	return [2]string{strings.TrimSpace(r.CompanyID), strings.TrimSpace(r.Key)}
}

// findingFor builds a finding for an outcome the register decided at commit time.
func findingFor(code, field, msg string) validate.Finding {
	info, _ := validate.LookupCode(code)
	return validate.Finding{Code: code, Severity: info.Severity, Field: field, Message: msg}
}

// quotaLine finds a line of a licence.
func quotaLine(lic *validate.Licence, n int) validate.QuotaLine {
	if lic != nil {
		for _, l := range lic.QuotaLines {
			if l.LineNumber == n {
				return l
			}
		}
	}
	return validate.QuotaLine{LineNumber: n}
}

// addBalanceFindings adds the quota notices a record earned with its own draw, from the
// balances the register drew on (the balance as of that draw).
func addBalanceFindings(v *validate.Verdict, lic *validate.Licence, bal []LineBalance) {
	for _, b := range bal {
		line := quotaLine(lic, b.LineNumber)
		alloc := b.Allocated.Float()
		fs := validate.QuotaFindings(b.LicenceNumber, line, alloc, (b.Allocated - b.Before).Float(), (b.Before - b.After).Float())
		if len(fs) > 0 {
			v.Add(fs...)
		}
	}
}

// quotaShortFinding is the QUOTA_EXCEEDED finding for a row the register turned down,
// with what was left on the line when the row came to draw.
func quotaShortFinding(lic *validate.Licence, res RecordResult, draws []Draw) validate.Finding {
	line := quotaLine(lic, res.LineNumber)
	var amount Nano
	for _, d := range draws {
		if d.LicenceNumber == res.LicenceNumber && d.LineNumber == res.LineNumber {
			amount += d.Amount
		}
	}
	alloc := line.Allocated
	if alloc < res.Remaining.Float() {
		alloc = res.Remaining.Float()
	}
	fs := validate.QuotaFindings(res.LicenceNumber, line, alloc, alloc-res.Remaining.Float(), amount.Float())
	if len(fs) == 0 || fs[0].Code != validate.CodeQuotaExceeded {
		return findingFor(validate.CodeQuotaExceeded, "", fmt.Sprintf("licence %s line %d has %s left when this record comes to draw; it needs %s",
			res.LicenceNumber, res.LineNumber, fmtNano(res.Remaining), fmtNano(amount)))
	}
	return fs[0]
}

func fmtNano(n Nano) string {
	s := strconv.FormatFloat(n.Float(), 'f', 9, 64)
	s = strings.TrimRight(s, "0")
	return strings.TrimSuffix(s, ".")
}

// RFC3339 formats a time as the register's answers do; "" for the zero time.
func RFC3339(t time.Time) string {
	if t.IsZero() {
		return ""
	}
	return t.UTC().Format(time.RFC3339Nano)
}

const dateLayout = "2006-01-02"

func kindText(k substances.Kind) string {
	if k == substances.KindBlend {
		return "blend"
	}
	return "substance"
}

// shipmentRow turns an accepted verdict into the row the register records.
// encode gives the record as the register keeps it.
// lic is the licence the verdict's draws were planned on (nil when the record names none).
func shipmentRow(encode func() ([]byte, error), r *validate.Record, v *validate.Verdict, lic *validate.Licence) (ShipmentRow, error) {
	date, err := validate.ParseDate(r.DeclarationDate)
	if err != nil {
		return ShipmentRow{}, err
	}
	js, err := encode()
	if err != nil {
		return ShipmentRow{}, err
	}
	f := &v.Figures
	row := ShipmentRow{CompanyID: strings.TrimSpace(r.CompanyID), RecordKey: strings.TrimSpace(r.Key),
		Fingerprint: v.Fingerprint, Direction: r.Direction, LicenceNumber: strings.TrimSpace(r.LicenceNumber),
		PartnerCountry: strings.ToUpper(strings.TrimSpace(r.PartnerCountry)), DeclarationDate: date,
		ResolvedDesignation: f.Designation, EntryKind: kindText(f.Kind), Purpose: r.Purpose,
		Condition: r.Condition, NetMassKg: ToNano(f.NetMassKg), ODPTonnes: ToNano(f.ODPTonnes),
		CO2eTonnes: ToNano(f.CO2eTonnes), CountsInConsumption: f.CountsInConsumption,
		PartnerNonParty: f.PartnerNonParty, RecordJSON: js}
	for _, c := range f.Components {
		notBound := c.Group != substances.GroupNone && !f.PartnerBoundFor(c.Group)
		row.Components = append(row.Components, ShipmentComponent{Designation: c.Designation, AnnexGroup: string(c.Group),
			MassKg: ToNano(c.MassKg), ODPTonnes: ToNano(c.ODPTonnes), CO2eTonnes: ToNano(c.CO2eTonnes),
			PartnerNonParty: &notBound})
	}
	var exactDraws []validate.ExactLineDraw
	if len(v.Draws) > 0 {
		exactDraws = validate.PlanDrawsExact(lic, f, r.Purpose)
	}
	for _, d := range v.Draws {
		row.Draws = append(row.Draws, Draw{LicenceNumber: d.LicenceNumber, LineNumber: d.LineNumber, Amount: drawNano(d, exactDraws)})
	}
	return row, nil
}

// drawNano is what a draw takes from its line, in billionths of the line's unit: the exact
// sum of the components' figures on that line (validate.PlanDrawsExact), rounded once, half
// away from zero, to the billionth (the 9th decimal). The register counts every line in
// billionths (numeric(30, 9), Nano), so the 10th decimal on is what rounds; the sum is
// rounded, not each component, so a blend draws what its total rounds to; and a half
// billionth rounds up (away from zero) as the float path's math.Round did, so only
// figures the float sum got wrong change. A draw the exact plan does not hold (a licence
// not at hand, or figures without their exact decimals) keeps the float amount, rounded
// the same way.
func drawNano(d validate.LineDraw, exactDraws []validate.ExactLineDraw) Nano {
	for _, x := range exactDraws {
		if x.LineNumber == d.LineNumber {
			if n, ok := x.Amount.Units(-9); ok {
				return Nano(n)
			}
		}
	}
	return ToNano(d.Amount)
}
