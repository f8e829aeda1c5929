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
	if out.OutsideCustoms && t != "" && !deductedUse(t) && t != store.EntryProduction {
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
	if int(y) < controls.MinYear || int(y) > controls.MaxYear {
		return &fieldViolation{field, fmt.Sprintf("is %d; accepted: a calendar year from %d to %d", y, controls.MinYear, controls.MaxYear)}
	}
	return nil
}

// parseScopeField reads an Annex group or "F" from a request field.
func parseScopeField(field, v string) (controls.Scope, error) {
	if strings.TrimSpace(v) == "" {
		return "", invalid(fieldViolation{field, "is empty; accepted: A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I or F (Annex F as a whole)"})
	}
	sc, err := controls.ParseScope(v)
	if err != nil {
		return "", invalid(fieldViolation{field, fmt.Sprintf("%q is not a control scope; accepted: A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I or F (Annex F as a whole)", v)})
	}
	return sc, nil
}

// reportingParty reads the reporting Party and maps it to the controls settings.
func (s *Server) reportingParty(ctx context.Context) (store.Party, controls.Party, error) {
	p, err := s.store.ReportingParty(ctx)
	if errors.Is(err, store.ErrNoReportingParty) {
		return p, controls.Party{}, status.Error(codes.FailedPrecondition,
			"no reporting Party is configured: load the party settings and name the reporting country (SetReportingParty, 'halovet reporting-party CODE', or reporting_party set in a first 'halovet load scenario.json')")
	}
	if err != nil {
		return p, controls.Party{}, toStatus(ctx, s.log, err)
	}
	cp, err := controlsParty(p)
	if err != nil {
		return p, cp, status.Errorf(codes.FailedPrecondition,
			"the reporting Party %s has party type %q; the control schedules need ARTICLE_5 or NON_ARTICLE_5 (PutParty)", p.CountryCode, p.PartyType)
	}
	if err := cp.Validate(); err != nil {
		return p, cp, status.Errorf(codes.FailedPrecondition, "the reporting Party %s: HFC group %q does not fit party type %q; correct the party settings (PutParty)",
			p.CountryCode, p.HFCGroup, p.PartyType)
	}
	return p, cp, nil
}

// scopeRules is what a question about a control scope starts with: the reporting Party
// (refused, for an Annex F question, when it has no HFC group) and the rulebook.
func (c *consumptionServer) scopeRules(ctx context.Context, scope controls.Scope) (controls.Party, *controls.Rulebook, error) {
	p, party, err := c.srv.reportingParty(ctx)
	if err != nil {
		return party, nil, err
	}
	if err := needHFCGroup(p, party, scope); err != nil {
		return party, nil, err
	}
	rb, err := consumptionRulebook()
	if err != nil {
		return party, nil, toStatus(ctx, c.srv.log, err)
	}
	return party, rb, nil
}

// needHFCGroup refuses an Annex F question when the reporting Party has no HFC group.
func needHFCGroup(p store.Party, cp controls.Party, scope controls.Scope) error {
	if scope == controls.ScopeF && cp.HFC == controls.HFCGroupUnset {
		return status.Errorf(codes.FailedPrecondition,
			"the reporting Party %s has no HFC group, and Annex F baselines and schedules depend on it: set hfc_group (A5_GROUP_1, A5_GROUP_2, NON_A5 or NON_A5_VARIANT) with PutParty", p.CountryCode)
	}
	return nil
}

// consumptionRulebook returns the control schedules and baselines embedded in the binary.
func consumptionRulebook() (*controls.Rulebook, error) {
	rb, err := controls.DefaultRulebook()
	if err != nil {
		return nil, fmt.Errorf("embedded rulebook: %w", err)
	}
	return rb, nil
}

// arithmeticError maps an error of the controls arithmetic on stored data: invalid input
// there is a data problem, not the caller's.
func arithmeticError(ctx context.Context, s *Server, err error) error {
	if _, ok := status.FromError(err); ok {
		return err
	}
	var fe *controls.FieldError
	if errors.As(err, &fe) {
		return status.Errorf(codes.FailedPrecondition, "the stored data cannot be computed: %v", err)
	}
	if errors.Is(err, controls.ErrNoRule) || errors.Is(err, controls.ErrIncompleteBaseline) {
		return status.Error(codes.FailedPrecondition, err.Error())
	}
	return toStatus(ctx, s.log, err)
}

func (c *consumptionServer) GetConsumption(ctx context.Context, req *halovetv1.GetConsumptionRequest) (*halovetv1.GetConsumptionResponse, error) {
	if v := checkQueryYear("year", req.GetYear()); v != nil {
		return nil, invalid(*v)
	}
	var only []substances.Group
	if g := strings.TrimSpace(req.GetAnnexGroup()); g != "" {
		if validGroup(strings.ToUpper(g)) {
			only = []substances.Group{substances.Group(strings.ToUpper(g))}
		} else {
			sc, err := parseScopeField("annex_group", g)
			if err != nil {
				return nil, err
			}
			only = sc.Groups()
		}
	}
	year := int(req.GetYear())
	d, err := c.srv.loadConsumption(ctx, []int{year})
	if err != nil {
		return nil, arithmeticError(ctx, c.srv, err)
	}
	cons, err := controls.Calculate(d.records, controls.ExcludeUsed)
	if err != nil {
		return nil, arithmeticError(ctx, c.srv, err)
	}
	out := &halovetv1.GetConsumptionResponse{Year: req.GetYear()}
	if p, err := c.srv.store.ReportingParty(ctx); err == nil {
		out.CountryCode = p.CountryCode
	} else if errors.Is(err, store.ErrNoReportingParty) {
		out.Notes = append(out.Notes, "no reporting Party is configured; the figures are the recorded data's")
	} else {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	used := 0.0
	for _, g := range cons.Groups {
		if only != nil && !slices.Contains(only, g.Group) {
			continue
		}
		pg := &halovetv1.GroupConsumption{AnnexGroup: string(g.Group)}
		for _, sc := range g.Substances {
			// A substance with all flows 0 is a stated zero (a 0 t entry): data, shown.
			used += sc.Flows.UsedImports + sc.Flows.UsedExports
			pg.Substances = append(pg.Substances, substanceConsumptionToProto(sc))
			pg.ConsumptionTonnes += sc.Tonnes
			pg.ConsumptionOdpTonnes += sc.ODPTonnes
			pg.ConsumptionCo2ETonnes += sc.CO2eTonnes
		}
		out.Groups = append(out.Groups, pg)
	}
	for _, g := range substances.AllGroups {
		if only != nil && !slices.Contains(only, g) {
			continue
		}
		if _, ok := cons.Group(year, g); !ok {
			out.NoDataGroups = append(out.NoDataGroups, string(g))
		}
	}
	if !d.anyYears[year] {
		out.Notes = append(out.Notes, fmt.Sprintf("no recorded shipments and no national entries for %d", year))
	}
	out.Notes = append(out.Notes, "feedstock, QPS and destruction are deducted from the shipments by their declared purpose; national entries of those kinds add only what never passed customs (domestic production used as feedstock, stocks destroyed), or, unmarked, a whole year's use for a year without shipments declared for it")
	if len(out.NoDataGroups) > 0 {
		out.Notes = append(out.Notes, "no data (not zero) for "+strings.Join(out.NoDataGroups, ", ")+": a group without a recorded shipment or a national entry in the year has no data; enter 0 t to state a true zero")
	}
	if used != 0 {
		out.Notes = append(out.Notes, fmt.Sprintf("%s t of used, recycled or reclaimed imports and exports are reported but not counted (Decision IV/24, if reported under Article 7); they do count in an Article 5 Party's base-year consumption", fmtT(used)))
	}
	if len(cons.Uncontrolled) > 0 {
		out.Notes = append(out.Notes, "uncontrolled components left out: "+strings.Join(cons.Uncontrolled, ", "))
	}
	if only == nil || slices.Contains(only, substances.GroupFII) {
		hs, err := c.srv.store.ListHFC23Entries(ctx, year)
		if err != nil {
			return nil, toStatus(ctx, c.srv.log, err)
		}
		gwp := c.srv.hfc23GWP()
		for _, e := range hs {
			out.Hfc23ByProduct = append(out.Hfc23ByProduct, hfc23ToProto(e, gwp))
		}
		if len(hs) > 0 {
			out.Notes = append(out.Notes, "HFC-23 by-product per facility is reported beside Annex F consumption and is not part of it (Art. 2J paras 6-7; Art. 3 para 1(d); Art. 7 para 3 ter)")
		}
	}
	out.Notes = append(out.Notes, d.notes...)
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
	scope, err := parseScopeField("annex_group", req.GetAnnexGroup())
	if err != nil {
		return nil, err
	}
	party, rb, err := c.scopeRules(ctx, scope)
	if err != nil {
		return nil, err
	}
	if _, err := rb.BaselineRule(party, scope); errors.Is(err, controls.ErrNoRule) {
		return nil, invalid(fieldViolation{"annex_group", fmt.Sprintf("%s has no baseline: its consumption limit is 0 from the start (%v)", scope,
			strings.TrimPrefix(err.Error(), controls.ErrNoRule.Error()+": "))})
	}
	years := uniqueYears(baselineYears(rb, party, scope))
	d, err := c.srv.loadConsumption(ctx, years)
	if err != nil {
		return nil, arithmeticError(ctx, c.srv, err)
	}
	b, err := rb.Baseline(d.records, party, scope)
	if err != nil {
		return nil, arithmeticError(ctx, c.srv, err)
	}
	out := baselineToProto(b, d.records[:d.nStored], years)
	rp, err := c.srv.store.ReportingParty(ctx)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	ov, err := c.srv.overrides(ctx, rp.CountryCode, scope)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	if ob := ov.Baseline; ob != nil {
		out.HasOfficialBaseline, out.OfficialBaseline, out.OfficialBaselineSource = true, ob.Value, ob.Source
		out.Notes = append(out.Notes, fmt.Sprintf("a baseline as officially set is stored (%s %s, %s): compliance and quota planning use it instead of the computed one", fmtT(ob.Value), b.Unit, ob.Source))
	}
	return out, nil
}

func baselineToProto(b controls.Baseline, records []controls.Record, years []int) *halovetv1.GetBaselineResponse {
	annex := string(b.Scope)
	out := &halovetv1.GetBaselineResponse{AnnexGroup: annex, Unit: string(b.Unit), Baseline: b.Value,
		Years: baselineYearsToProto(b.Years), HcfcComponent: b.HCFCComponent, HcfcShare: b.HCFCShare, Complete: b.Complete,
		Rule: b.Rule.Description() + " (" + b.RuleText() + ")", Mean: b.Mean, CfcShare: b.CFCShare,
		CfcYears: baselineYearsToProto(b.CFCYears), CfcTerm: b.CFCTerm, AppliesTo: b.AppliesTo}
	for _, g := range b.Missing {
		out.Missing = append(out.Missing, gapText(g, records, years))
	}
	out.Notes = append(out.Notes, b.Notes...)
	out.Notes = append(out.Notes, coverageNotes(records, b.Scope, yearRange(b.Rule.FromYear, b.Rule.ToYear))...)
	if h := b.HCFC; h != nil {
		out.HcfcBaseline = &halovetv1.BaselinePart{AnnexGroup: string(h.Scope), Unit: string(h.Unit), Value: h.Value, Mean: h.Mean,
			Years: baselineYearsToProto(h.Years), CfcShare: h.CFCShare, CfcYears: baselineYearsToProto(h.CFCYears),
			CfcTerm: h.CFCTerm, Complete: h.Complete, Rule: h.Rule.Description() + " (" + h.RuleText() + ")"}
		for _, n := range h.Notes {
			if !slices.Contains(out.Notes, n) {
				out.Notes = append(out.Notes, n)
			}
		}
		out.Notes = append(out.Notes, coverageNotes(records, h.Scope, yearRange(h.Rule.FromYear, h.Rule.ToYear))...)
	}
	return out
}

var outcomeToProto = map[controls.Outcome]halovetv1.ComplianceOutcome{
	controls.Within:      halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN,
	controls.Exceeded:    halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED,
	controls.NotAssessed: halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_NOT_ASSESSED,
}

func (c *consumptionServer) AssessCompliance(ctx context.Context, req *halovetv1.AssessComplianceRequest) (*halovetv1.AssessComplianceResponse, error) {
	scope, err := parseScopeField("annex_group", req.GetAnnexGroup())
	if err != nil {
		return nil, err
	}
	var vs []fieldViolation
	if v := checkQueryYear("from_year", req.GetFromYear()); v != nil {
		vs = append(vs, *v)
	}
	if v := checkQueryYear("to_year", req.GetToYear()); v != nil {
		vs = append(vs, *v)
	}
	if len(vs) == 0 && req.GetToYear() < req.GetFromYear() {
		vs = append(vs, fieldViolation{"to_year", fmt.Sprintf("%d is before from_year %d", req.GetToYear(), req.GetFromYear())})
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	from, to := int(req.GetFromYear()), int(req.GetToYear())
	party, rb, err := c.scopeRules(ctx, scope)
	if err != nil {
		return nil, err
	}
	years := append(yearRange(from, to), baselineYears(rb, party, scope)...)
	for y := from; y <= to; y++ {
		if al, err := rb.Allowance(party, scope, y); err == nil && al.Average != nil {
			years = append(years, yearRange(al.Average.FromYear, y)...)
		}
	}
	years = uniqueYears(years)
	d, err := c.srv.loadConsumption(ctx, years)
	if err != nil {
		return nil, arithmeticError(ctx, c.srv, err)
	}
	rp, err := c.srv.store.ReportingParty(ctx)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	ov, err := c.srv.overrides(ctx, rp.CountryCode, scope)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	a, err := rb.AssessWith(d.records, party, scope, from, to, ov)
	if err != nil {
		return nil, arithmeticError(ctx, c.srv, err)
	}
	out := &halovetv1.AssessComplianceResponse{AnnexGroup: string(scope), Unit: string(a.Unit), AppliesTo: a.AppliesTo,
		BaselineComplete: true}
	if ob := a.OfficialBaseline; ob != nil {
		out.HasOfficialBaseline = true
		out.OfficialBaselineSource = ob.Source
	}
	// The baseline is shown even when no assessed year needed it (0 % steps).
	b := a.Baseline
	if b == nil {
		if bb, err := rb.Baseline(d.records, party, scope); err == nil {
			b = &bb
		}
	}
	if b != nil {
		out.Baseline = b.Value
		out.ComputedBaseline = b.Value
		out.BaselineComplete = b.Complete
		for _, g := range b.Missing {
			out.BaselineMissing = append(out.BaselineMissing, gapText(g, d.records[:d.nStored], baselineYears(rb, party, scope)))
		}
	}
	if ob := a.OfficialBaseline; ob != nil {
		// The official baseline is the one used; the computed one stays beside it.
		out.Baseline = ob.Value
		out.BaselineComplete = true
	}
	var sources []string
	for _, y := range a.Years {
		cy := &halovetv1.ComplianceYear{Year: int32(y.Year), Consumption: y.Consumption, Allowed: y.Allowed,
			AllowedPercent: y.AllowedPercent, Headroom: y.Headroom, Within: y.Outcome == controls.Within,
			Notes: y.Notes, Outcome: outcomeToProto[y.Outcome], HasData: y.HasData, ComputedAllowed: y.ComputedAllowed,
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
		for _, r := range []*controls.Rule{y.Step, y.Servicing} {
			if r != nil && !slices.Contains(sources, r.Text()) {
				sources = append(sources, r.Text())
			}
		}
		if y.Period != nil && !slices.Contains(sources, y.Period.Rule.Text()) {
			sources = append(sources, y.Period.Rule.Text())
		}
		if len(y.Exemptions) > 0 {
			notes, err := c.srv.exemptedUseNotes(ctx, scope, y.Year, y.Exemptions)
			if err != nil {
				return nil, arithmeticError(ctx, c.srv, err)
			}
			cy.Notes = append(cy.Notes, notes...)
		}
		out.Years = append(out.Years, cy)
	}
	out.ScheduleSource = fmt.Sprintf("rulebook %s as of %s", a.RulebookVersion, a.RulebookAsOf)
	if len(sources) > 0 {
		out.ScheduleSource += ": " + strings.Join(sources, "; ")
	}
	return out, nil
}
