package service

import (
	"math"
	"strconv"
	"sync"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/validate"
)

// RecordToProto maps a parsed record to the wire record, as the command line sends it;
// recordFromProto is its inverse. The enums are mapped by wireterms.
func RecordToProto(r *validate.Record) *halovetv1.ShipmentRecord {
	p := &halovetv1.ShipmentRecord{RecordKey: r.Key, SourceLine: r.Line, Direction: wireterms.DirectionToWire(r.Direction),
		CompanyId: r.CompanyID, LicenceNumber: r.LicenceNumber, PartnerCountry: r.PartnerCountry,
		DeclarationDate: r.DeclarationDate, Substance: r.Substance, DeclaredHsCode: r.HSCode,
		DeclaredCasNumber: r.CAS, DeclaredFormula: r.Formula, TotalNetQuantity: r.TotalQuantity, QuantityUnit: r.Unit,
		PackageCount: r.PackageCount, NetFillPerPackage: r.FillPerPackage, Purpose: wireterms.PurposeToWire(r.Purpose), Condition: wireterms.ConditionToWire(r.Condition)}
	if len(r.Composition) > 0 {
		shares := make([]halovetv1.MixtureShare, len(r.Composition)) // one allocation for the shares
		p.DeclaredComposition = make([]*halovetv1.MixtureShare, len(r.Composition))
		for i, s := range r.Composition {
			shares[i].Identifier, shares[i].MassPercent = s.Identifier, shareText.get(math.Float64bits(s.MassPct), storedBits)
			p.DeclaredComposition[i] = &shares[i]
		}
	}
	for _, s := range r.Measured {
		p.MeasuredComposition = append(p.MeasuredComposition, &halovetv1.MeasuredShare{Identifier: s.Identifier, MassPercent: stored(s.MassPct), UncertaintyPoints: stored(s.Uncertainty)})
	}
	return p
}

// shareText and shareFloat remember the wire text of the declared shares and the floats
// it reads as (stored and wireFloat, which go through an exact decimal each time): a
// batch declares the same few compositions again and again.
var (
	shareText  = newMemo[uint64, string](1024) // by the float's bits
	shareFloat = newMemo[string, float64](1024)
)

// storedBits is stored of the float with bits b.
func storedBits(b uint64) string { return stored(math.Float64frombits(b)) }

// memo remembers the answers of a pure function, at most max of them; beyond, the
// function is called each time.
type memo[K comparable, V any] struct {
	mu  sync.RWMutex
	m   map[K]V
	max int
}

func newMemo[K comparable, V any](max int) *memo[K, V] { return &memo[K, V]{m: map[K]V{}, max: max} }

// get is f(k), remembered.
func (c *memo[K, V]) get(k K, f func(K) V) V {
	c.mu.RLock()
	v, ok := c.m[k]
	c.mu.RUnlock()
	if ok {
		return v
	}
	v = f(k)
	c.mu.Lock()
	if len(c.m) < c.max {
		c.m[k] = v
	}
	c.mu.Unlock()
	return v
}

// recordFromProto maps a wire record to the checker's record (enums by wireterms; see
// recordDirection for a number the wire does not declare).
func recordFromProto(p *halovetv1.ShipmentRecord) validate.Record {
	r := validate.Record{Key: p.GetRecordKey(), Line: p.GetSourceLine(), Direction: recordDirection(p.GetDirection()),
		CompanyID: p.GetCompanyId(), LicenceNumber: p.GetLicenceNumber(), PartnerCountry: p.GetPartnerCountry(),
		DeclarationDate: p.GetDeclarationDate(), Substance: p.GetSubstance(), HSCode: p.GetDeclaredHsCode(),
		CAS: p.GetDeclaredCasNumber(), Formula: p.GetDeclaredFormula(), TotalQuantity: p.GetTotalNetQuantity(),
		Unit: p.GetQuantityUnit(), PackageCount: p.GetPackageCount(), FillPerPackage: p.GetNetFillPerPackage(), Purpose: recordPurpose(p.GetPurpose()),
		Condition: recordCondition(p.GetCondition())}
	for _, s := range p.GetDeclaredComposition() {
		r.Composition = append(r.Composition, validate.DeclaredShare{Identifier: s.GetIdentifier(), MassPct: shareFloat.get(s.GetMassPercent(), wireFloat)})
	}
	for _, s := range p.GetMeasuredComposition() {
		r.Measured = append(r.Measured, validate.MeasuredShare{Identifier: s.GetIdentifier(), MassPct: wireFloat(s.GetMassPercent()), Uncertainty: wireFloat(s.GetUncertaintyPoints())})
	}
	return r
}

var severityProto = map[validate.Severity]halovetv1.Severity{
	validate.SeverityNotice:  halovetv1.Severity_SEVERITY_NOTICE,
	validate.SeverityWarning: halovetv1.Severity_SEVERITY_WARNING,
	validate.SeverityError:   halovetv1.Severity_SEVERITY_ERROR,
}

var outcomeProto = map[validate.Outcome]halovetv1.Outcome{
	validate.OutcomeAccepted:             halovetv1.Outcome_OUTCOME_ACCEPTED,
	validate.OutcomeAcceptedWithWarnings: halovetv1.Outcome_OUTCOME_ACCEPTED_WITH_WARNINGS,
	validate.OutcomeRejected:             halovetv1.Outcome_OUTCOME_REJECTED,
}

func verdictToProto(v *validate.Verdict) *halovetv1.Verdict { return verdictToProtoWith(v, true) }

// verdictToProtoWith is verdictToProto, with the per-component figures only when
// components is set.
func verdictToProtoWith(v *validate.Verdict, components bool) *halovetv1.Verdict {
	return (*verdictSlab)(nil).verdict(v, components)
}

// verdictSlab holds the messages of the wire verdicts of one stream message, allocated
// together (a verdict, its figures and its draws) instead of one by one; the verdicts of
// one message are sent together and dropped together. A nil slab allocates each message.
type verdictSlab struct {
	verdicts []halovetv1.Verdict
	figures  []halovetv1.ShipmentFigures
	draws    []halovetv1.QuotaDraw
	drawRefs []*halovetv1.QuotaDraw
}

// newVerdictSlab is room for n verdicts, each with figures and one draw (more draws are
// allocated as they come).
func newVerdictSlab(n int) *verdictSlab {
	return &verdictSlab{verdicts: make([]halovetv1.Verdict, 0, n), figures: make([]halovetv1.ShipmentFigures, 0, n),
		draws: make([]halovetv1.QuotaDraw, 0, n), drawRefs: make([]*halovetv1.QuotaDraw, 0, n)}
}

func (s *verdictSlab) newVerdict() *halovetv1.Verdict {
	if s == nil || len(s.verdicts) == cap(s.verdicts) {
		return &halovetv1.Verdict{}
	}
	s.verdicts = s.verdicts[:len(s.verdicts)+1]
	return &s.verdicts[len(s.verdicts)-1]
}

func (s *verdictSlab) newFigures() *halovetv1.ShipmentFigures {
	if s == nil || len(s.figures) == cap(s.figures) {
		return &halovetv1.ShipmentFigures{}
	}
	s.figures = s.figures[:len(s.figures)+1]
	return &s.figures[len(s.figures)-1]
}

func (s *verdictSlab) newDraw() *halovetv1.QuotaDraw {
	if s == nil || len(s.draws) == cap(s.draws) {
		return &halovetv1.QuotaDraw{}
	}
	s.draws = s.draws[:len(s.draws)+1]
	return &s.draws[len(s.draws)-1]
}

// drawList is an empty list with room for n draws (its capacity is its own: appending
// to it never writes into another verdict's).
func (s *verdictSlab) drawList(n int) []*halovetv1.QuotaDraw {
	if s == nil || cap(s.drawRefs)-len(s.drawRefs) < n {
		return make([]*halovetv1.QuotaDraw, 0, n)
	}
	at := len(s.drawRefs)
	s.drawRefs = s.drawRefs[:at+n]
	return s.drawRefs[at : at : at+n]
}

// verdict is the wire form of v (verdictToProtoWith), its messages taken from s.
func (s *verdictSlab) verdict(v *validate.Verdict, components bool) *halovetv1.Verdict {
	out := s.newVerdict()
	out.RecordKey, out.SourceLine, out.Outcome, out.Replayed = v.RecordKey, v.Line, outcomeProto[v.Outcome], v.Replayed
	out.Findings = make([]*halovetv1.Finding, len(v.Findings))
	for i, f := range v.Findings {
		out.Findings[i] = &halovetv1.Finding{Code: f.Code, Severity: severityProto[f.Severity], Field: f.Field, Message: f.Message}
	}
	if v.Resolved {
		f := &v.Figures
		fg := s.newFigures()
		fg.ResolvedDesignation, fg.Kind = f.Designation, kindProto(f.Kind)
		if components {
			x := f.ExactsText() // Exacts' decimals' text, in integers where they fit
			fg.NetMassKg, fg.OdpTonnes, fg.Co2ETonnes = x.NetMassKg, x.ODPTonnes, x.CO2eTonnes
			fg.Components = verdictComponents(f.Components, x.Components)
		} else { // the same totals, without a decimal per component (validate.Figures.TotalsText)
			fg.NetMassKg, fg.OdpTonnes, fg.Co2ETonnes = f.TotalsText()
		}
		fg.CountsInConsumption, fg.SafetyClass, fg.PartnerNonParty = f.CountsInConsumption, f.SafetyClass, f.PartnerNonParty
		for _, g := range f.PartnerNotBoundGroups {
			fg.PartnerNotBoundGroups = append(fg.PartnerNotBoundGroups, string(g))
		}
		out.Figures = fg
	}
	if len(v.Draws) > 0 {
		out.Draws = s.drawList(len(v.Draws))
	}
	for _, d := range v.Draws {
		// In the store's billionths, so that a verdict answered now and the same verdict
		// read back from the store agree to the digit.
		qd := s.newDraw()
		qd.LicenceNumber, qd.LineNumber, qd.Amount = d.LicenceNumber, int32(d.LineNumber), nanoText(int64(store.ToNano(d.Amount)))
		out.Draws = append(out.Draws, qd)
	}
	return out
}

// nanoText is nanoFigure (an amount in billionths as an exact decimal: "0" for zero, no
// trailing zeros, no exponent), written with integer arithmetic.
func nanoText(n int64) string {
	if n == 0 {
		return "0"
	}
	var b [24]byte
	out := b[:0]
	u := uint64(n)
	if n < 0 {
		out = append(out, '-')
		u = -u
	}
	out = strconv.AppendUint(out, u/1e9, 10)
	if frac := u % 1e9; frac != 0 {
		var digits [9]byte
		for i := 8; i >= 0; i-- {
			digits[i] = byte('0' + frac%10)
			frac /= 10
		}
		end := 9
		for digits[end-1] == '0' {
			end--
		}
		out = append(out, '.')
		out = append(out, digits[:end]...)
	}
	return string(out)
}

// verdictComponents writes a verdict's components with their exact figures xs (from
// validate.Figures.ExactsText, one per component), the messages allocated together.
func verdictComponents(cs []substances.ComponentFigures, xs []validate.ComponentText) []*halovetv1.ComponentFigures {
	out := make([]*halovetv1.ComponentFigures, len(cs))
	msgs := make([]halovetv1.ComponentFigures, len(cs))
	for i, c := range cs {
		x := &xs[i]
		m := &msgs[i]
		m.Designation, m.AnnexGroup, m.MassPercent, m.MassKg = c.Designation, string(c.Group), x.MassPct, x.MassKg
		m.Odp, m.OdpTonnes, m.Gwp_100YrProtocol, m.Co2ETonnes, m.SafetyClass = x.ODP, x.ODPTonnes, x.ProtocolGWP, x.CO2eTonnes, c.SafetyClass
		out[i] = m
	}
	return out
}

// recordJSON gives a wire record in the form the register keeps it (ShipmentRow.RecordJSON).
func recordJSON(p *halovetv1.ShipmentRecord) func() ([]byte, error) {
	return func() ([]byte, error) { return storedRecordJSON(p) }
}

// RecordFromProto maps a wire record to the checker's record, as the command line writes
// a recorded shipment back into a batch file; RecordToProto is its inverse.
func RecordFromProto(p *halovetv1.ShipmentRecord) validate.Record { return recordFromProto(p) }

var (
	cautionMu    sync.Mutex
	cautionCache = map[string][]string{}
)

// cautionsFor returns the catalogue's safety cautions for a safety class.
func cautionsFor(class string) []string {
	cautionMu.Lock()
	defer cautionMu.Unlock()
	c, ok := cautionCache[class]
	if !ok {
		c = substances.Cautions(class, true)
		cautionCache[class] = c
	}
	return c
}

var outcomeFromProto = map[halovetv1.Outcome]validate.Outcome{
	halovetv1.Outcome_OUTCOME_ACCEPTED:               validate.OutcomeAccepted,
	halovetv1.Outcome_OUTCOME_ACCEPTED_WITH_WARNINGS: validate.OutcomeAcceptedWithWarnings,
	halovetv1.Outcome_OUTCOME_REJECTED:               validate.OutcomeRejected,
}

var severityFromProto = map[halovetv1.Severity]validate.Severity{
	halovetv1.Severity_SEVERITY_NOTICE:  validate.SeverityNotice,
	halovetv1.Severity_SEVERITY_WARNING: validate.SeverityWarning,
	halovetv1.Severity_SEVERITY_ERROR:   validate.SeverityError,
}

// VerdictFromProto maps a wire verdict back to the validate verdict, as the command line
// and the console read the answers of the streaming calls (the cautions of its safety
// class from the catalogue).
func VerdictFromProto(p *halovetv1.Verdict) validate.Verdict {
	v := validate.Verdict{RecordKey: p.GetRecordKey(), Line: p.GetSourceLine(), Outcome: outcomeFromProto[p.GetOutcome()],
		Replayed: p.GetReplayed()}
	for _, f := range p.GetFindings() {
		v.Findings = append(v.Findings, validate.Finding{Code: f.GetCode(), Severity: severityFromProto[f.GetSeverity()],
			Field: f.GetField(), Message: f.GetMessage()})
	}
	if fg := p.GetFigures(); fg != nil {
		v.Resolved = true
		x := &validate.FiguresExact{NetMassKg: wireDecimal(fg.GetNetMassKg()), ODPTonnes: wireDecimal(fg.GetOdpTonnes()),
			CO2eTonnes: wireDecimal(fg.GetCo2ETonnes())}
		v.Figures = validate.Figures{Designation: fg.GetResolvedDesignation(), NetMassKg: x.NetMassKg.Float64(),
			ODPTonnes: x.ODPTonnes.Float64(), CO2eTonnes: x.CO2eTonnes.Float64(), CountsInConsumption: fg.GetCountsInConsumption(),
			PartnerNonParty: fg.GetPartnerNonParty(), SafetyClass: fg.GetSafetyClass(), Cautions: cautionsFor(fg.GetSafetyClass()),
			Exact: x}
		if fg.GetKind() == halovetv1.EntryKind_ENTRY_KIND_BLEND {
			v.Figures.Kind = substances.KindBlend
		} else {
			v.Figures.Kind = substances.KindSubstance
		}
		for _, c := range fg.GetComponents() {
			v.Figures.Components = append(v.Figures.Components, substances.ComponentFigures{Designation: c.GetDesignation(),
				Group: substances.Group(c.GetAnnexGroup()), MassPct: wireFloat(c.GetMassPercent()), MassKg: wireFloat(c.GetMassKg()), ODP: wireFloat(c.GetOdp()),
				ODPTonnes: wireFloat(c.GetOdpTonnes()), ProtocolGWP: wireFloat(c.GetGwp_100YrProtocol()), CO2eTonnes: wireFloat(c.GetCo2ETonnes()), SafetyClass: c.GetSafetyClass()})
			x.Components = append(x.Components, substances.ComponentExact{MassPct: wireDecimal(c.GetMassPercent()), MassKg: wireDecimal(c.GetMassKg()),
				ODP: wireDecimal(c.GetOdp()), ODPTonnes: wireDecimal(c.GetOdpTonnes()), ProtocolGWP: wireDecimal(c.GetGwp_100YrProtocol()),
				CO2eTonnes: wireDecimal(c.GetCo2ETonnes())})
		}

	}
	return v
}
