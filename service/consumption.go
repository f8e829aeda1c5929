package service

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"unicode"
	"unicode/utf8"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
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

// Limits of one RecordNationalEntries call and of its fields.
const (
	maxEntriesPerCall = 10000
	maxEntryKeyBytes  = 128
	maxEntryNoteBytes = 1000
	maxEntryTonnes    = 1e9  // a billion tonnes: far above any national figure
	firstEntryYear    = 1986 // the earliest base year (Annex A, non-Article 5)
)

func printableText(s string) bool {
	if !utf8.ValidString(s) {
		return false
	}
	for _, r := range s {
		if !unicode.IsPrint(r) {
			return false
		}
	}
	return true
}

// entryFromProto validates one entry; f is its field path.
func (s *Server) entryFromProto(f string, e *halovetv1.NationalEntry, cat *substances.Catalogue) (store.NationalEntry, []fieldViolation) {
	var vs []fieldViolation
	out := store.NationalEntry{Key: strings.TrimSpace(e.GetEntryKey()), Year: int(e.GetYear()), Note: strings.TrimSpace(e.GetNote())}
	switch {
	case out.Key == "":
		vs = append(vs, fieldViolation{f + ".entry_key", "must not be empty; give each entry a key of your own, e.g. PROD-2025-HCFC-22"})
	case len(out.Key) > maxEntryKeyBytes || !printableText(out.Key):
		vs = append(vs, fieldViolation{f + ".entry_key", fmt.Sprintf("must be printable text of at most %d bytes", maxEntryKeyBytes)})
	}
	if out.Year < firstEntryYear || out.Year > controls.MaxYear {
		vs = append(vs, fieldViolation{f + ".year", fmt.Sprintf("is %d; accepted: a calendar year from %d to %d", out.Year, firstEntryYear, controls.MaxYear)})
	}
	t, ok := entryTypeText[e.GetEntryType()]
	if !ok {
		vs = append(vs, fieldViolation{f + ".entry_type", "must be PRODUCTION, DESTRUCTION, FEEDSTOCK, QPS, HISTORICAL_IMPORT, HISTORICAL_EXPORT or HISTORICAL_EXPORT_NON_PARTY"})
	}
	out.Type = t
	name := strings.TrimSpace(e.GetSubstance())
	sub, found := cat.Substance(name)
	switch {
	case name == "":
		vs = append(vs, fieldViolation{f + ".substance", "must not be empty; give a designation such as HCFC-22"})
	case !found:
		if b, isBlend := cat.Blend(name); isBlend {
			parts := make([]string, len(b.Components))
			for i, c := range b.Components {
				parts[i] = fmt.Sprintf("%s %g %%", c.Designation, c.MassPct)
			}
			vs = append(vs, fieldViolation{f + ".substance", fmt.Sprintf(
				"%s is a blend; national entries are per substance: split it into one entry per controlled component by nominal mass (%s)",
				b.Designation, strings.Join(parts, ", "))})
			break
		}
		msg := fmt.Sprintf("%q is not a catalogue substance", name)
		if r := cat.Resolve(name); len(r.Suggestions) > 0 {
			msg += "; did you mean " + strings.Join(r.Suggestions, ", ") + "?"
		}
		vs = append(vs, fieldViolation{f + ".substance", msg})
	case !sub.Group.Controlled():
		vs = append(vs, fieldViolation{f + ".substance", fmt.Sprintf("%s is not controlled by the Montreal Protocol; national entries are for substances of Annexes A to F", sub.Designation)})
	default:
		out.Substance = sub.Designation
		if t == store.EntryQPS && sub.Group != substances.GroupEI {
			vs = append(vs, fieldViolation{f + ".entry_type", fmt.Sprintf("QPS applies to methyl bromide (Annex E) only, not to %s", sub.Designation)})
		}
	}
	out.OutsideCustoms = e.GetOutsideCustoms()
	if out.OutsideCustoms && t != "" && !controls.DeductedUse(t) && t != store.EntryProduction {
		vs = append(vs, fieldViolation{f + ".outside_customs", "must be false for historical trade totals (they passed customs); accepted: true only for production, destruction, feedstock and QPS entries"})
	}
	if t == store.EntryDestruction && out.Substance == "HFC-23" {
		vs = append(vs, fieldViolation{f + ".entry_type", "HFC-23 destroyed at a plant is by-product, not a deduction from consumption (Art. 2J paras 6-7; Art. 3 para 1(d)): record it as an HFC-23 facility entry (RecordHfc23Entries); HFC-23 imported for destruction is deducted through the shipment's declared purpose"})
	}
	out.Tonnes = e.GetMetricTonnes()
	if math.IsNaN(out.Tonnes) || out.Tonnes < 0 || out.Tonnes > maxEntryTonnes {
		vs = append(vs, fieldViolation{f + ".metric_tonnes", fmt.Sprintf("is %v; accepted: metric tonnes from 0 to %g", out.Tonnes, float64(maxEntryTonnes))})
	}
	if len(out.Note) > maxEntryNoteBytes || !printableText(out.Note) {
		vs = append(vs, fieldViolation{f + ".note", fmt.Sprintf("must be printable text of at most %d bytes", maxEntryNoteBytes)})
	}
	return out, vs
}

func entryToProto(e store.NationalEntry) *halovetv1.NationalEntry {
	return &halovetv1.NationalEntry{EntryKey: e.Key, Year: int32(e.Year), EntryType: entryTypeEnum[e.Type],
		Substance: e.Substance, MetricTonnes: e.Tonnes, Note: e.Note, OutsideCustoms: e.OutsideCustoms}
}

func (c *consumptionServer) RecordNationalEntries(ctx context.Context, req *halovetv1.RecordNationalEntriesRequest) (*halovetv1.RecordNationalEntriesResponse, error) {
	in := req.GetEntries()
	if len(in) == 0 {
		return nil, invalid(fieldViolation{"entries", "is empty; give at least one entry"})
	}
	if len(in) > maxEntriesPerCall {
		return nil, invalid(fieldViolation{"entries", fmt.Sprintf("holds %d entries; at most %d per call", len(in), maxEntriesPerCall)})
	}
	cat := c.srv.cat.Load()
	var vs []fieldViolation
	entries := make([]store.NationalEntry, 0, len(in))
	first := map[string]int{}
	for i, e := range in {
		f := fmt.Sprintf("entries[%d]", i)
		se, bad := c.srv.entryFromProto(f, e, cat)
		vs = append(vs, bad...)
		if j, dup := first[se.Key]; dup && se.Key != "" {
			vs = append(vs, fieldViolation{f + ".entry_key", fmt.Sprintf("%q is also the key of entries[%d]; each key once per call", se.Key, j)})
		} else {
			first[se.Key] = i
		}
		entries = append(entries, se)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...) // nothing stored
	}
	// One source per quantity: a whole-year entry of a use the shipments already deduct
	// would count that use twice. (A shipment recorded after the entry is caught when the
	// year is computed: the entry is then left out with a note.)
	vs, err := c.srv.doubleCountViolations(ctx, entries)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if err := c.srv.store.PutNationalEntries(ctx, entries); err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	out := &halovetv1.RecordNationalEntriesResponse{Stored: int32(len(entries))}
	for _, e := range entries {
		out.Entries = append(out.Entries, entryToProto(e))
	}
	return out, nil
}

func (c *consumptionServer) ListNationalEntries(ctx context.Context, req *halovetv1.ListNationalEntriesRequest) (*halovetv1.ListNationalEntriesResponse, error) {
	y := int(req.GetYear())
	if y != 0 && (y < controls.MinYear || y > controls.MaxYear) {
		return nil, invalid(fieldViolation{"year", fmt.Sprintf("is %d; accepted: 0 for every year, or a year from %d to %d", y, controls.MinYear, controls.MaxYear)})
	}
	es, err := c.srv.store.ListNationalEntries(ctx, y)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	out := &halovetv1.ListNationalEntriesResponse{}
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

// reportingParty reads the reporting Party (for the year figures' default country),
// refusing settings the control schedules cannot use.
func (s *Server) reportingParty(ctx context.Context) (store.Party, error) {
	p, err := s.store.ReportingParty(ctx)
	if errors.Is(err, store.ErrNoReportingParty) {
		return p, status.Error(codes.FailedPrecondition,
			"no reporting Party is configured: load the party settings and name the reporting country (SetReportingParty, 'halovet reporting-party CODE', or reporting_party set in a first 'halovet load scenario.json')")
	}
	if err != nil {
		return p, toStatus(ctx, s.log, err)
	}
	lp, err := partyFromStore(p)
	if err == nil {
		_, err = ledger.CheckReportingParty(lp)
	}
	return p, s.ledgerStatus(ctx, err)
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
