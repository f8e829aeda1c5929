package service

import (
	"context"
	"fmt"
	"slices"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// ConsumptionService: national entries, consumption, baselines, compliance and quota
// planning for the reporting Party. The arithmetic is the controls package's; this file
// validates requests, reads the totals from the store (consumption_ledger.go) and maps the
// results to the API.

var entryTypeText = map[halovetv1.EntryType]string{
	halovetv1.EntryType_ENTRY_TYPE_PRODUCTION:                  store.EntryProduction,
	halovetv1.EntryType_ENTRY_TYPE_DESTRUCTION:                 store.EntryDestruction,
	halovetv1.EntryType_ENTRY_TYPE_FEEDSTOCK:                   store.EntryFeedstock,
	halovetv1.EntryType_ENTRY_TYPE_QPS:                         store.EntryQPS,
	halovetv1.EntryType_ENTRY_TYPE_HISTORICAL_IMPORT:           store.EntryHistoricalImport,
	halovetv1.EntryType_ENTRY_TYPE_HISTORICAL_EXPORT:           store.EntryHistoricalExport,
	halovetv1.EntryType_ENTRY_TYPE_HISTORICAL_EXPORT_NON_PARTY: store.EntryHistoricalExportNonParty,
}

var entryTypeEnum = invert(entryTypeText)

func entryToProto(e store.NationalEntry) *halovetv1.NationalEntry {
	return &halovetv1.NationalEntry{EntryKey: e.Key, Year: int32(e.Year), EntryType: entryTypeEnum[e.Type],
		Substance: e.Substance, MetricTonnes: e.Tonnes, Note: e.Note, OutsideCustoms: e.OutsideCustoms}
}

func (c *consumptionServer) RecordNationalEntries(ctx context.Context, req *halovetv1.RecordNationalEntriesRequest) (*halovetv1.RecordNationalEntriesResponse, error) {
	in := make([]ledger.NationalEntry, len(req.GetEntries()))
	for i, e := range req.GetEntries() {
		in[i] = ledger.NationalEntry{Key: e.GetEntryKey(), Year: int(e.GetYear()), Kind: entryTypeText[e.GetEntryType()],
			Substance: e.GetSubstance(), Tonnes: e.GetMetricTonnes(), Note: e.GetNote(), OutsideCustoms: e.GetOutsideCustoms()}
	}
	entries, err := c.srv.figures.RecordNationalEntries(ctx, in)
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	out := &halovetv1.RecordNationalEntriesResponse{Stored: int32(len(entries))}
	for _, e := range entries {
		out.Entries = append(out.Entries, entryToProto(store.NationalEntry{Key: e.Key, Year: e.Year, Type: e.Kind,
			Substance: e.Substance, Tonnes: e.Tonnes, Note: e.Note, OutsideCustoms: e.OutsideCustoms}))
	}
	return out, nil
}

func (c *consumptionServer) ListNationalEntries(ctx context.Context, req *halovetv1.ListNationalEntriesRequest) (*halovetv1.ListNationalEntriesResponse, error) {
	pg, vs, err := c.srv.openPage(ctx, "national-entries", req)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	y := int(req.GetYear())
	if y != 0 && (y < controls.MinYear || y > controls.MaxYear) {
		vs = append([]fieldViolation{{"year", fmt.Sprintf("is %d; accepted: 0 for every year, or a year from %d to %d", y, controls.MinYear, controls.MaxYear)}}, vs...)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	es, err := c.srv.store.ListNationalEntriesPage(ctx, y, pg)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	out := &halovetv1.ListNationalEntriesResponse{}
	if es, out.NextPageToken, err = closePage(ctx, c.srv, "national-entries", req, pg, es); err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	for _, e := range es {
		out.Entries = append(out.Entries, entryToProto(e))
	}
	return out, nil
}

// checkQueryYear validates a year of a query.
func checkQueryYear(field string, y int32) *fieldViolation {
	if v := ledger.CheckQueryYear(field, int(y)); v != nil {
		return &fieldViolation{v.Field, v.Why}
	}
	return nil
}

func (c *consumptionServer) GetConsumption(ctx context.Context, req *halovetv1.GetConsumptionRequest) (*halovetv1.GetConsumptionResponse, error) {
	r, err := c.srv.cons.GetConsumption(ctx, int(req.GetYear()), req.GetAnnexGroup())
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	out := &halovetv1.GetConsumptionResponse{Year: req.GetYear(), CountryCode: r.CountryCode, Notes: r.Notes}
	for _, g := range r.Groups {
		pg := &halovetv1.GroupConsumption{AnnexGroup: string(g.Group)}
		for _, sc := range g.Substances {
			pg.Substances = append(pg.Substances, substanceConsumptionToProto(sc))
			pg.ConsumptionTonnes += sc.Tonnes
			pg.ConsumptionOdpTonnes += sc.ODPTonnes
			pg.ConsumptionCo2ETonnes += sc.CO2eTonnes
		}
		out.Groups = append(out.Groups, pg)
	}
	for _, g := range r.NoDataGroups {
		out.NoDataGroups = append(out.NoDataGroups, string(g))
	}
	for _, e := range r.HFC23 {
		out.Hfc23ByProduct = append(out.Hfc23ByProduct, hfc23ToProto(store.HFC23Entry(e), r.HFC23GWP))
	}
	return out, nil
}

func substanceConsumptionToProto(sc controls.SubstanceConsumption) *halovetv1.SubstanceConsumption {
	f := sc.Flows
	return &halovetv1.SubstanceConsumption{Substance: sc.Substance.Designation, ProductionTonnes: f.Production,
		ImportTonnes: f.Imports, ExportTonnes: f.Exports, DestructionTonnes: f.Destruction, FeedstockTonnes: f.Feedstock,
		QpsTonnes: f.QPS, NotCountedTonnes: f.UsedImports + f.UsedExports + f.Transit, ExportNonPartyTonnes: f.ExportsNonParty,
		ConsumptionTonnes: sc.Tonnes, ConsumptionOdpTonnes: sc.ODPTonnes, ConsumptionCo2ETonnes: sc.CO2eTonnes}
}

func baselineYearsToProto(ys []controls.YearAmount) []*halovetv1.BaselineYear {
	out := make([]*halovetv1.BaselineYear, len(ys))
	for i, y := range ys {
		out[i] = &halovetv1.BaselineYear{Year: int32(y.Year), Amount: y.Amount, HasData: y.HasData}
	}
	return out
}

func (c *consumptionServer) GetBaseline(ctx context.Context, req *halovetv1.GetBaselineRequest) (*halovetv1.GetBaselineResponse, error) {
	r, err := c.srv.cons.GetBaseline(ctx, req.GetAnnexGroup())
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	b := r.Baseline
	out := &halovetv1.GetBaselineResponse{AnnexGroup: string(b.Scope), Unit: string(b.Unit), Baseline: b.Value,
		Years: baselineYearsToProto(b.Years), HcfcComponent: b.HCFCComponent, HcfcShare: b.HCFCShare, Complete: b.Complete,
		Rule: b.Rule.Description() + " (" + b.RuleText() + ")", Mean: b.Mean, CfcShare: b.CFCShare,
		CfcYears: baselineYearsToProto(b.CFCYears), CfcTerm: b.CFCTerm, AppliesTo: b.AppliesTo,
		Missing: r.Missing, Notes: r.Notes}
	if h := b.HCFC; h != nil {
		out.HcfcBaseline = &halovetv1.BaselinePart{AnnexGroup: string(h.Scope), Unit: string(h.Unit), Value: h.Value, Mean: h.Mean,
			Years: baselineYearsToProto(h.Years), CfcShare: h.CFCShare, CfcYears: baselineYearsToProto(h.CFCYears),
			CfcTerm: h.CFCTerm, Complete: h.Complete, Rule: h.Rule.Description() + " (" + h.RuleText() + ")"}
	}
	if ob := r.Official; ob != nil {
		out.HasOfficialBaseline, out.OfficialBaseline, out.OfficialBaselineSource = true, ob.Value, ob.Source
	}
	return out, nil
}

var outcomeToProto = map[controls.Outcome]halovetv1.ComplianceOutcome{
	controls.Within:      halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN,
	controls.Exceeded:    halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED,
	controls.NotAssessed: halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_NOT_ASSESSED,
}

func (c *consumptionServer) AssessCompliance(ctx context.Context, req *halovetv1.AssessComplianceRequest) (*halovetv1.AssessComplianceResponse, error) {
	r, err := c.srv.cons.AssessCompliance(ctx, req.GetAnnexGroup(), int(req.GetFromYear()), int(req.GetToYear()))
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	a := r.Assessment
	out := &halovetv1.AssessComplianceResponse{AnnexGroup: string(a.Scope), Unit: string(a.Unit), AppliesTo: a.AppliesTo,
		BaselineComplete: true, BaselineMissing: r.BaselineMissing, ScheduleSource: r.ScheduleSource}
	if b := r.Baseline; b != nil {
		out.Baseline, out.ComputedBaseline, out.BaselineComplete = b.Value, b.Value, b.Complete
	}
	if ob := a.OfficialBaseline; ob != nil {
		// The official baseline is the one used; the computed one stays beside it.
		out.HasOfficialBaseline, out.OfficialBaselineSource = true, ob.Source
		out.Baseline, out.BaselineComplete = ob.Value, true
	}
	for _, y := range a.Years {
		out.Years = append(out.Years, complianceYearToProto(y, r.YearNotes[y.Year]))
	}
	return out, nil
}

func complianceYearToProto(y controls.YearAssessment, notes []string) *halovetv1.ComplianceYear {
	cy := &halovetv1.ComplianceYear{Year: int32(y.Year), Consumption: y.Consumption, Allowed: y.Allowed,
		AllowedPercent: y.AllowedPercent, Headroom: y.Headroom, Within: y.Outcome == controls.Within,
		Notes: slices.Concat(y.Notes, notes), Outcome: outcomeToProto[y.Outcome], HasData: y.HasData, ComputedAllowed: y.ComputedAllowed,
		Exempted: y.Exempted}
	if l := y.OfficialLimit; l != nil {
		cy.HasOfficialLimit, cy.OfficialLimit, cy.OfficialLimitSource = true, l.Value, l.Source
	}
	for _, e := range y.Exemptions {
		cy.Exemptions = append(cy.Exemptions, &halovetv1.AppliedExemption{Use: exemptedUseEnum[string(e.Use)], Amount: e.Amount, Source: e.Source})
	}
	if pp := y.Period; pp != nil {
		cy.Period = &halovetv1.PeriodAverage{FromYear: int32(pp.Rule.FromYear), ToYear: int32(pp.Rule.ToYear),
			Percent: pp.Rule.Percent, YearsCounted: int32(pp.YearsCounted), YearsRemaining: int32(pp.YearsRemaining),
			Sum: pp.Sum, RunningAverage: pp.RunningMean, RunningPercent: pp.RunningPercent, Budget: pp.Budget,
			RoomLeft: pp.RoomLeft, RoomPerYear: pp.RoomPerYear}
	}
	return cy
}
