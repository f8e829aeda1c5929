package service

import (
	"context"
	"fmt"
	"slices"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/exact"
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
		Substance: e.Substance, MetricTonnes: dec(e.Tonnes), Note: e.Note, OutsideCustoms: e.OutsideCustoms}
}

func (c *consumptionServer) RecordNationalEntries(ctx context.Context, req *halovetv1.RecordNationalEntriesRequest) (*halovetv1.RecordNationalEntriesResponse, error) {
	in := make([]ledger.NationalEntry, len(req.GetEntries()))
	var vs []fieldViolation
	for i, e := range req.GetEntries() {
		in[i] = ledger.NationalEntry{Key: e.GetEntryKey(), Year: int(e.GetYear()), Kind: entryTypeText[e.GetEntryType()],
			Substance: e.GetSubstance(), Tonnes: tonnesIn(indexed("entries", i, "metric_tonnes"), e.GetMetricTonnes(), &vs),
			Note: e.GetNote(), OutsideCustoms: e.GetOutsideCustoms()}
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
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
		pg := &halovetv1.GroupConsumption{AnnexGroup: string(g.Group), ConsumptionTonnes: dec(g.Tonnes),
			ConsumptionOdpTonnes: dec(g.ODPTonnes), ConsumptionCo2ETonnes: dec(g.CO2eTonnes)}
		for _, sc := range g.Substances {
			pg.Substances = append(pg.Substances, substanceConsumptionToProto(sc))
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
	return &halovetv1.SubstanceConsumption{Substance: sc.Substance.Designation, ProductionTonnes: dec(f.Production),
		ImportTonnes: dec(f.Imports), ExportTonnes: dec(f.Exports), DestructionTonnes: dec(f.Destruction), FeedstockTonnes: dec(f.Feedstock),
		QpsTonnes: dec(f.QPS), NotCountedTonnes: dec(f.NotCounted()), ExportNonPartyTonnes: dec(f.ExportsNonParty),
		ConsumptionTonnes: dec(sc.Tonnes), ConsumptionOdpTonnes: dec(sc.ODPTonnes), ConsumptionCo2ETonnes: dec(sc.CO2eTonnes)}
}

func baselineYearsToProto(ys []controls.YearAmount) []*halovetv1.BaselineYear {
	out := make([]*halovetv1.BaselineYear, len(ys))
	for i, y := range ys {
		out[i] = &halovetv1.BaselineYear{Year: int32(y.Year), Amount: decIf(y.Amount, y.HasData), HasData: y.HasData}
	}
	return out
}

// allData reports whether every year of a series has data (its mean is then known).
func allData(ys []controls.YearAmount) bool {
	for _, y := range ys {
		if !y.HasData {
			return false
		}
	}
	return true
}

func (c *consumptionServer) GetBaseline(ctx context.Context, req *halovetv1.GetBaselineRequest) (*halovetv1.GetBaselineResponse, error) {
	r, err := c.srv.cons.GetBaseline(ctx, req.GetAnnexGroup())
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	b := r.Baseline
	cfc := b.Rule.Term == controls.TermCFC
	meanKnown := len(b.Years) > 0 && allData(b.Years)
	out := &halovetv1.GetBaselineResponse{AnnexGroup: string(b.Scope), Unit: controlUnitProto(string(b.Unit)),
		BaselineAmount: decIf(b.Value, b.Complete), Years: baselineYearsToProto(b.Years), Complete: b.Complete,
		Rule: b.Rule.Description() + " (" + b.RuleText() + ")", MeanAmount: decIf(b.Mean, meanKnown),
		CfcShareRatio: decIf(b.CFCShare, cfc), CfcYears: baselineYearsToProto(b.CFCYears),
		CfcTermAmount: decIf(b.CFCTerm, cfc && allData(b.CFCYears)), AppliesTo: scheduleProto[b.AppliesTo],
		Missing: r.Missing, Notes: r.Notes}
	if h := b.HCFC; h != nil {
		hcfc := h.Rule.Term == controls.TermCFC
		out.HcfcShareRatio = dec(b.HCFCShare)
		out.HcfcComponentAmount = decIf(b.HCFCComponent, h.Complete)
		out.HcfcBaseline = &halovetv1.BaselinePart{AnnexGroup: string(h.Scope), Unit: controlUnitProto(string(h.Unit)),
			BaselineAmount: decIf(h.Value, h.Complete), MeanAmount: decIf(h.Mean, allData(h.Years)),
			Years: baselineYearsToProto(h.Years), CfcShareRatio: decIf(h.CFCShare, hcfc), CfcYears: baselineYearsToProto(h.CFCYears),
			CfcTermAmount: decIf(h.CFCTerm, hcfc && allData(h.CFCYears)), Complete: h.Complete, Rule: h.Rule.Description() + " (" + h.RuleText() + ")"}
	}
	if ob := r.Official; ob != nil {
		out.HasOfficialBaseline, out.OfficialBaselineAmount, out.OfficialBaselineSource = true, dec(ob.Value), ob.Source
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
	out := &halovetv1.AssessComplianceResponse{AnnexGroup: string(a.Scope), Unit: controlUnitProto(string(a.Unit)), AppliesTo: scheduleProto[a.AppliesTo],
		BaselineComplete: true, BaselineMissing: r.BaselineMissing, ScheduleSource: r.ScheduleSource}
	if b := r.Baseline; b != nil {
		out.BaselineAmount, out.ComputedBaselineAmount, out.BaselineComplete = decIf(b.Value, b.Complete), decIf(b.Value, b.Complete), b.Complete
	}
	if ob := a.OfficialBaseline; ob != nil {
		// The official baseline is the one used; the computed one stays beside it.
		out.HasOfficialBaseline, out.OfficialBaselineSource = true, ob.Source
		out.BaselineAmount, out.BaselineComplete = dec(ob.Value), true
	}
	for _, y := range a.Years {
		out.Years = append(out.Years, complianceYearToProto(y, r.YearNotes[y.Year]))
	}
	return out, nil
}

func complianceYearToProto(y controls.YearAssessment, notes []string) *halovetv1.ComplianceYear {
	assessed := y.Outcome != controls.NotAssessed
	cy := &halovetv1.ComplianceYear{Year: int32(y.Year), ConsumptionAmount: decIf(y.Consumption, y.HasData),
		AllowedAmount: decIf(y.Allowed, y.Assessed), AllowedPercent: decIf(y.AllowedPercent, y.HasRule),
		HeadroomAmount: decIf(y.Headroom, assessed), Within: y.Outcome == controls.Within,
		Notes: slices.Concat(y.Notes, notes), Outcome: outcomeToProto[y.Outcome], HasData: y.HasData,
		ComputedAllowedAmount: decIf(y.ComputedAllowed, y.Assessed), ExemptedAmount: dec(y.Exempted)}
	if l := y.OfficialLimit; l != nil {
		cy.HasOfficialLimit, cy.OfficialLimitAmount, cy.OfficialLimitSource = true, dec(l.Value), l.Source
	}
	for _, e := range y.Exemptions {
		cy.Exemptions = append(cy.Exemptions, &halovetv1.AppliedExemption{Use: exemptedUseEnum[string(e.Use)], Amount: dec(e.Amount), Source: e.Source})
	}
	if pp := y.Period; pp != nil {
		cy.Period = &halovetv1.PeriodAverage{FromYear: int32(pp.Rule.FromYear), ToYear: int32(pp.Rule.ToYear),
			LimitPercent: dec(exact.OfFloat(pp.Rule.Percent)), YearsCounted: int32(pp.YearsCounted), YearsRemaining: int32(pp.YearsRemaining),
			SumAmount: dec(pp.Sum), RunningAverageAmount: dec(pp.RunningMean), RunningPercent: decIf(pp.RunningPercent, !pp.Budget.IsZero()),
			BudgetAmount: dec(pp.Budget), RoomLeftAmount: dec(pp.RoomLeft), RoomPerYearAmount: decIf(pp.RoomPerYear, pp.YearsRemaining > 0)}
	}
	return cy
}
