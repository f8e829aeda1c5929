package service

import (
	"context"

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
	an, err := a.srv.cat.Load().Analyse(ReadingFromProto(req), substances.AnalysisOptions{
		Declared: req.GetDeclared(), NetMassKg: req.GetNetMassKg(), NearMisses: int(req.GetNearMisses())})
	if err != nil {
		return nil, evaluationError(err)
	}
	return AnalysisToProto(&an), nil
}

// ReadingFromProto converts a request's reading for substances.Catalogue.Analyse.
func ReadingFromProto(req *halovetv1.AnalyseReadingRequest) substances.Reading {
	r := substances.Reading{NonCondensablePct: req.GetNonCondensablePercent(), Uncertainty: req.GetUncertaintyPoints()}
	for _, c := range req.GetComponents() {
		r.Components = append(r.Components, substances.MeasuredShare{Identifier: c.GetIdentifier(),
			MassPct: c.GetMassPercent(), Uncertainty: c.GetUncertaintyPoints()})
	}
	return r
}

var readingStates = map[substances.ReadingState]halovetv1.ReadingState{
	substances.ReadingStandard:     halovetv1.ReadingState_READING_STATE_STANDARD,
	substances.ReadingContaminated: halovetv1.ReadingState_READING_STATE_CONTAMINATED,
	substances.ReadingMixed:        halovetv1.ReadingState_READING_STATE_MIXED,
}

// AnalysisToProto is the wire form of an analysis (used by the handler and by the CLI's
// JSON output, so both print the same fields).
func AnalysisToProto(a *substances.Analysis) *halovetv1.AnalyseReadingResponse {
	out := &halovetv1.AnalyseReadingResponse{NonCondensablePercent: a.NonCondensablePct, NonCondensableNote: a.NonCondensableNote,
		State: readingStates[a.State], Fitting: int32(a.Fitting), SetAside: a.SetAside, CleanFits: a.CleanFits,
		DeclaredFits: a.DeclaredFits, Figures: componentsToProto(a.Figures.Components), OdpTonnes: a.Figures.ODPTonnes,
		Co2ETonnes: a.Figures.CO2eTonnes, Summary: a.Summary, Cautions: a.Cautions}
	for _, c := range a.Components {
		out.Components = append(out.Components, &halovetv1.MeasuredComponent{Designation: c.Designation, AnnexGroup: string(c.Group),
			ReadPercent: c.ReadPct, MassPercent: c.MassPct, UncertaintyPoints: c.Uncertainty, SafetyClass: c.SafetyClass})
	}
	for i := range a.Matches {
		out.Matches = append(out.Matches, matchToProto(&a.Matches[i]))
	}
	if a.Declared != nil {
		out.Declared = matchToProto(a.Declared)
	}
	for _, h := range a.Hidden {
		out.Hidden = append(out.Hidden, &halovetv1.HiddenSubstance{Designation: h.Designation, AnnexGroup: string(h.Group),
			MassPercent: h.MassPct, MassKg: h.MassKg, Odp: h.ODP, OdpTonnes: h.ODPTonnes, GwpProtocol: h.ProtocolGWP,
			Co2ETonnes: h.CO2eTonnes, ListedGwpTonnes: h.ListedGWPTonnes})
	}
	return out
}

func matchToProto(m *substances.Match) *halovetv1.ReadingMatch {
	kind := halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE
	if m.Kind == substances.KindBlend {
		kind = halovetv1.EntryKind_ENTRY_KIND_BLEND
	}
	p := &halovetv1.ReadingMatch{Designation: m.Designation, Kind: kind, Fits: m.Fits, ExcessPoints: m.Excess,
		Depth: m.Depth, Extra: m.Extra, Missing: m.Missing, SafetyClass: m.SafetyClass}
	for _, g := range m.Groups {
		p.AnnexGroups = append(p.AnnexGroups, string(g))
	}
	for _, f := range m.Components {
		p.Components = append(p.Components, &halovetv1.ComponentBand{Designation: f.Designation, MeasuredPercent: f.MeasuredPct,
			NominalPercent: f.NominalPct, BandLowPercent: f.Low, BandHighPercent: f.High, ExcessPoints: f.Excess,
			InCandidate: f.InCandidate, InReading: f.InReading})
	}
	return p
}
