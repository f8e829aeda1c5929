package service

import (
	"context"
	"fmt"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/substances"
)

// analysisServer answers AnalysisService from the catalogue snapshot; it touches no table.
type analysisServer struct {
	halovetv1.UnimplementedAnalysisServiceServer
	srv *Server
}

// The analysis service reports its health with the others.
func init() {
	serviceNames = append(serviceNames, halovetv1.AnalysisService_ServiceDesc.ServiceName)
}

// AnalyseReading compares one reading with the catalogue and the declaration.
func (a *analysisServer) AnalyseReading(_ context.Context, req *halovetv1.AnalyseReadingRequest) (*halovetv1.AnalyseReadingResponse, error) {
	r, vs := ReadingFromProto(req)
	mass, _ := figureIn("net_mass_kg", req.GetNetMassKg(), &vs)
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	an, err := a.srv.cat.Load().Analyse(r, substances.AnalysisOptions{
		Declared: req.GetDeclared(), NetMass: mass, NearMisses: int(req.GetNearMissCount())})
	if err != nil {
		return nil, evaluationError(err)
	}
	return AnalysisToProto(&an), nil
}

// ReadingFromProto converts a request's reading for substances.Catalogue.Analyse, with a
// violation for every figure that is not a decimal.
func ReadingFromProto(req *halovetv1.AnalyseReadingRequest) (substances.Reading, []fieldViolation) {
	var vs []fieldViolation
	_, ncg := figureSigned("non_condensable_percent", req.GetNonCondensablePercent(), &vs)
	_, unc := figureSigned("uncertainty_points", req.GetUncertaintyPoints(), &vs)
	r := substances.Reading{NonCondensablePct: ncg, Uncertainty: unc}
	for i, c := range req.GetComponents() {
		_, pct := figureSigned(fmt.Sprintf("components[%d].mass_percent", i), c.GetMassPercent(), &vs)
		_, u := figureSigned(fmt.Sprintf("components[%d].uncertainty_points", i), c.GetUncertaintyPoints(), &vs)
		r.Components = append(r.Components, substances.MeasuredShare{Identifier: c.GetIdentifier(), MassPct: pct, Uncertainty: u})
	}
	return r, vs
}

var readingStates = map[substances.ReadingState]halovetv1.ReadingState{
	substances.ReadingStandard:     halovetv1.ReadingState_READING_STATE_STANDARD,
	substances.ReadingContaminated: halovetv1.ReadingState_READING_STATE_CONTAMINATED,
	substances.ReadingMixed:        halovetv1.ReadingState_READING_STATE_MIXED,
}

// AnalysisToProto is the wire form of an analysis (used by the handler and by the CLI's
// JSON output, so both print the same fields).
func AnalysisToProto(a *substances.Analysis) *halovetv1.AnalyseReadingResponse {
	out := &halovetv1.AnalyseReadingResponse{NonCondensablePercent: stored(a.NonCondensablePct), NonCondensableNote: a.NonCondensableNote,
		State: readingStates[a.State], FittingCount: int32(a.Fitting), SetAside: a.SetAside, CleanFits: a.CleanFits,
		DeclaredFits: a.DeclaredFits, Figures: componentsToProto(a.Figures.Components), OdpTonnes: a.Figures.Exact.ODPTonnes.String(),
		Co2ETonnes: a.Figures.Exact.CO2eTonnes.String(), Summary: a.Summary, Cautions: a.Cautions}
	for _, c := range a.Components {
		out.Components = append(out.Components, &halovetv1.MeasuredComponent{Designation: c.Designation, AnnexGroup: string(c.Group),
			ReadPercent: stored(c.ReadPct), MassPercent: derived(c.MassPct), UncertaintyPoints: derived(c.Uncertainty), SafetyClass: c.SafetyClass})
	}
	for i := range a.Matches {
		out.Matches = append(out.Matches, matchToProto(&a.Matches[i]))
	}
	if a.Declared != nil {
		out.Declared = matchToProto(a.Declared)
	}
	for _, h := range a.Hidden {
		out.Hidden = append(out.Hidden, &halovetv1.HiddenSubstance{Designation: h.Designation, AnnexGroup: string(h.Group),
			MassPercent: h.Exact.MassPct.String(), MassKg: h.Exact.MassKg.String(), Odp: h.Exact.ODP.String(),
			OdpTonnes: h.Exact.ODPTonnes.String(), Gwp_100YrProtocol: h.Exact.ProtocolGWP.String(),
			Co2ETonnes: h.Exact.CO2eTonnes.String(), ListedCo2ETonnes: h.Exact.ListedGWPTonnes.String()})
	}
	return out
}

func matchToProto(m *substances.Match) *halovetv1.ReadingMatch {
	kind := halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE
	if m.Kind == substances.KindBlend {
		kind = halovetv1.EntryKind_ENTRY_KIND_BLEND
	}
	p := &halovetv1.ReadingMatch{Designation: m.Designation, Kind: kind, Fits: m.Fits, ExcessPoints: derived(m.Excess),
		DepthRatio: derived(m.Depth), Extra: m.Extra, Missing: m.Missing, SafetyClass: m.SafetyClass}
	for _, g := range m.Groups {
		p.AnnexGroups = append(p.AnnexGroups, string(g))
	}
	for _, f := range m.Components {
		p.Components = append(p.Components, &halovetv1.ComponentBand{Designation: f.Designation, MeasuredPercent: derived(f.MeasuredPct),
			NominalPercent: stored(f.NominalPct), BandLowPercent: derived(f.Low), BandHighPercent: derived(f.High), ExcessPoints: derived(f.Excess),
			InCandidate: f.InCandidate, InReading: f.InReading})
	}
	return p
}
