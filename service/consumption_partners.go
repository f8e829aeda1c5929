package service

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strings"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// Partner reconciliation: what partners report as exported to the reporting Party against
// the recorded imports from them, per partner and substance. A gap is the usual first sign
// of trade that passed no licence (common practice of national ozone units).

// Defaults of a reconciliation.
const (
	defaultReconcileTolerance = 0.05  // 5 % of the larger figure (common practice: from memory)
	defaultReconcileMinGap    = 0.001 // t
)

func (c *consumptionServer) RecordPartnerExports(ctx context.Context, req *halovetv1.RecordPartnerExportsRequest) (*halovetv1.RecordPartnerExportsResponse, error) {
	in := req.GetReports()
	if len(in) == 0 || len(in) > maxEntriesPerCall {
		return nil, invalid(fieldViolation{"reports", fmt.Sprintf("holds %d reports; give 1 to %d", len(in), maxEntriesPerCall)})
	}
	cat := c.srv.cat.Load()
	var vs []fieldViolation
	add := func(v *fieldViolation) {
		if v != nil {
			vs = append(vs, *v)
		}
	}
	out := make([]store.PartnerExport, 0, len(in))
	seen := map[string]int{}
	for i, r := range in {
		f := fmt.Sprintf("reports[%d]", i)
		var sr store.PartnerExport
		var v *fieldViolation
		sr.Key, v = keyText(f+".report_key", r.GetReportKey(), "XC-2025-HFC-134a")
		add(v)
		if j, dup := seen[sr.Key]; dup && sr.Key != "" {
			add(&fieldViolation{f + ".report_key", fmt.Sprintf("%q is also the key of reports[%d]; each key once per call", sr.Key, j)})
		}
		seen[sr.Key] = i
		sr.Year = int(r.GetYear())
		add(checkQueryYear(f+".year", r.GetYear()))
		sr.Partner = strings.ToUpper(strings.TrimSpace(r.GetPartnerCountry()))
		if !countryCodeRE.MatchString(sr.Partner) {
			add(&fieldViolation{f + ".partner_country", fmt.Sprintf("%q is not an ISO 3166-1 alpha-2 code; accepted: two capital letters", r.GetPartnerCountry())})
		}
		name := strings.TrimSpace(r.GetSubstance())
		sub, ok := cat.Substance(name)
		switch {
		case !ok:
			msg := fmt.Sprintf("%q is not a catalogue substance; accepted: a single controlled substance (split blends into their components)", name)
			if _, isBlend := cat.Blend(name); isBlend {
				msg = fmt.Sprintf("%s is a blend; partner figures are compared per substance: split it into its controlled components", name)
			}
			add(&fieldViolation{f + ".substance", msg})
		case !sub.Group.Controlled():
			add(&fieldViolation{f + ".substance", fmt.Sprintf("%s is not controlled by the Montreal Protocol", sub.Designation)})
		default:
			sr.Substance = sub.Designation
		}
		sr.Tonnes = r.GetMetricTonnes()
		if math.IsNaN(sr.Tonnes) || sr.Tonnes < 0 || sr.Tonnes > maxEntryTonnes {
			add(&fieldViolation{f + ".metric_tonnes", fmt.Sprintf("is %v; accepted: metric tonnes from 0 to %g", sr.Tonnes, float64(maxEntryTonnes))})
		}
		sr.Source = strings.TrimSpace(r.GetSource())
		if len(sr.Source) > maxEntryNoteBytes || !printableText(sr.Source) {
			add(&fieldViolation{f + ".source", fmt.Sprintf("must be printable text of at most %d bytes", maxEntryNoteBytes)})
		}
		out = append(out, sr)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if err := c.srv.store.PutPartnerExports(ctx, out); err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	resp := &halovetv1.RecordPartnerExportsResponse{}
	for _, r := range out {
		resp.Reports = append(resp.Reports, &halovetv1.PartnerExport{ReportKey: r.Key, Year: int32(r.Year), PartnerCountry: r.Partner,
			Substance: r.Substance, MetricTonnes: r.Tonnes, Source: r.Source})
	}
	return resp, nil
}

func (c *consumptionServer) ReconcilePartnerExports(ctx context.Context, req *halovetv1.ReconcilePartnerExportsRequest) (*halovetv1.ReconcilePartnerExportsResponse, error) {
	var vs []fieldViolation
	if v := checkQueryYear("year", req.GetYear()); v != nil {
		vs = append(vs, *v)
	}
	tol, minGap := req.GetTolerance(), req.GetMinGapTonnes()
	if math.IsNaN(tol) || tol < 0 || tol >= 1 {
		vs = append(vs, fieldViolation{"tolerance", fmt.Sprintf("is %v; accepted: a fraction from 0 (the default, %g) to below 1", tol, defaultReconcileTolerance)})
	}
	if math.IsNaN(minGap) || minGap < 0 || minGap > maxEntryTonnes {
		vs = append(vs, fieldViolation{"min_gap_tonnes", fmt.Sprintf("is %v; accepted: metric tonnes ≥ 0 (0: %g)", minGap, defaultReconcileMinGap)})
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if tol == 0 {
		tol = defaultReconcileTolerance
	}
	if minGap == 0 {
		minGap = defaultReconcileMinGap
	}
	year := int(req.GetYear())
	reports, err := c.srv.store.ListPartnerExports(ctx, year)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	lines, err := c.srv.store.ShipmentLines(ctx, year)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	type pair struct{ partner, substance string }
	type side struct {
		partner, recorded float64
		ids               []int64
		keys              []string
	}
	pairs := map[pair]*side{}
	get := func(p pair) *side {
		s := pairs[p]
		if s == nil {
			s = &side{}
			pairs[p] = s
		}
		return s
	}
	for _, r := range reports {
		s := get(pair{r.Partner, r.Substance})
		s.partner += r.Tonnes
		s.keys = append(s.keys, r.Key)
	}
	reporting := map[string]bool{}
	for _, r := range reports {
		reporting[r.Partner] = true
	}
	var silent []string
	for _, l := range lines {
		// Imports only, controlled components only, from the partner named on the record.
		if l.Direction != "import" || l.AnnexGroup == "" {
			continue
		}
		if !reporting[l.PartnerCountry] {
			// A partner without any figure for the year is not compared: its figures are
			// missing, which is not a report of zero.
			if !slices.Contains(silent, l.PartnerCountry) {
				silent = append(silent, l.PartnerCountry)
			}
			continue
		}
		s := get(pair{l.PartnerCountry, l.Designation})
		s.recorded += l.Tonnes
		s.ids = append(s.ids, l.ShipmentIDs...)
	}
	keys := make([]pair, 0, len(pairs))
	for k := range pairs {
		keys = append(keys, k)
	}
	slices.SortFunc(keys, func(a, b pair) int {
		if c := strings.Compare(a.partner, b.partner); c != 0 {
			return c
		}
		return strings.Compare(a.substance, b.substance)
	})
	slices.Sort(silent)
	out := &halovetv1.ReconcilePartnerExportsResponse{Year: int32(year), Tolerance: tol, PairsCompared: int32(len(keys)), PartnersNotReporting: silent}
	for _, k := range keys {
		s := pairs[k]
		gap := s.partner - s.recorded
		if math.Abs(gap) <= minGap || math.Abs(gap) <= tol*math.Max(s.partner, s.recorded) {
			continue
		}
		slices.Sort(s.ids)
		s.ids = slices.Compact(s.ids)
		out.Gaps = append(out.Gaps, &halovetv1.PartnerGap{PartnerCountry: k.partner, Substance: k.substance, Year: int32(year),
			PartnerTonnes: s.partner, RecordedTonnes: s.recorded, GapTonnes: gap, ShipmentIds: s.ids, ReportKeys: s.keys})
	}
	return out, nil
}
