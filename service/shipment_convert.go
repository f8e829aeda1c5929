package service

import (
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
	for _, s := range r.Composition {
		p.DeclaredComposition = append(p.DeclaredComposition, &halovetv1.MixtureShare{Identifier: s.Identifier, MassPercent: stored(s.MassPct)})
	}
	for _, s := range r.Measured {
		p.MeasuredComposition = append(p.MeasuredComposition, &halovetv1.MeasuredShare{Identifier: s.Identifier, MassPercent: stored(s.MassPct), UncertaintyPoints: stored(s.Uncertainty)})
	}
	return p
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
		r.Composition = append(r.Composition, validate.DeclaredShare{Identifier: s.GetIdentifier(), MassPct: wireFloat(s.GetMassPercent())})
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
	out := &halovetv1.Verdict{RecordKey: v.RecordKey, SourceLine: v.Line, Outcome: outcomeProto[v.Outcome],
		Replayed: v.Replayed}
	out.Findings = make([]*halovetv1.Finding, len(v.Findings))
	for i, f := range v.Findings {
		out.Findings[i] = &halovetv1.Finding{Code: f.Code, Severity: severityProto[f.Severity], Field: f.Field, Message: f.Message}
	}
	if v.Resolved {
		f := &v.Figures
		x := f.Exacts()
		out.Figures = &halovetv1.ShipmentFigures{ResolvedDesignation: f.Designation, Kind: kindProto(f.Kind),
			NetMassKg: x.NetMassKg.String(), OdpTonnes: x.ODPTonnes.String(), Co2ETonnes: x.CO2eTonnes.String(),
			CountsInConsumption: f.CountsInConsumption, SafetyClass: f.SafetyClass, PartnerNonParty: f.PartnerNonParty}
		if components {
			out.Figures.Components = verdictComponents(f.Components, x.Components)
		}
		for _, g := range f.PartnerNotBoundGroups {
			out.Figures.PartnerNotBoundGroups = append(out.Figures.PartnerNotBoundGroups, string(g))
		}
	}
	for _, d := range v.Draws {
		// In the store's billionths, so that a verdict answered now and the same verdict
		// read back from the store agree to the digit.
		out.Draws = append(out.Draws, &halovetv1.QuotaDraw{LicenceNumber: d.LicenceNumber, LineNumber: int32(d.LineNumber),
			Amount: nanoFigure(int64(store.ToNano(d.Amount)))})
	}
	return out
}

// verdictComponents writes a verdict's components with their exact figures xs (from
// validate.Figures.Exacts, one per component).
func verdictComponents(cs []substances.ComponentFigures, xs []substances.ComponentExact) []*halovetv1.ComponentFigures {
	out := make([]*halovetv1.ComponentFigures, len(cs))
	for i, c := range cs {
		x := xs[i]
		out[i] = &halovetv1.ComponentFigures{Designation: c.Designation, AnnexGroup: string(c.Group), MassPercent: x.MassPct.String(),
			MassKg: x.MassKg.String(), Odp: x.ODP.String(), OdpTonnes: x.ODPTonnes.String(), Gwp_100YrProtocol: x.ProtocolGWP.String(),
			Co2ETonnes: x.CO2eTonnes.String(), SafetyClass: c.SafetyClass}
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
