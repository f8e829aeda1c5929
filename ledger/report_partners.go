package ledger

import (
	"context"
	"fmt"
	"slices"
	"strings"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/terms"
)

// Partner reconciliation: what partners report as exported to the reporting Party against
// the recorded imports from them, per partner and substance. A gap is the usual first sign
// of trade that passed no licence (common practice of national ozone units).

// Defaults of a reconciliation.
var (
	// DefaultReconcileTolerance is 5 % of the larger figure (common practice: from memory).
	DefaultReconcileTolerance = exact.Scaled(5, -2)
	// DefaultReconcileMinGap is 0.001 t.
	DefaultReconcileMinGap = exact.Scaled(1, -3)
)

// RecordPartnerExports validates and stores partners' export figures.
func (x *Figures) RecordPartnerExports(ctx context.Context, in []PartnerExport) ([]PartnerExport, error) {
	b, err := newBatch("reports", len(in), MaxEntriesPerCall, "reports")
	if err != nil {
		return nil, err
	}
	cat := x.cons.catalogue()
	out := make([]PartnerExport, 0, len(in))
	for i, r := range in {
		f := fmt.Sprintf("reports[%d]", i)
		sr := PartnerExport{Key: b.key(i, f+".report_key", r.Key, "XC-2025-HFC-134a"), Year: r.Year, Tonnes: r.Tonnes}
		b.add(CheckQueryYear(f+".year", r.Year))
		sr.Partner = strings.ToUpper(strings.TrimSpace(r.Partner))
		if !countryCode.MatchString(sr.Partner) {
			b.addf(f+".partner_country", "%q is not an ISO 3166-1 alpha-2 code; accepted: two capital letters", r.Partner)
		}
		name := strings.TrimSpace(r.Substance)
		sub, ok := cat.Substance(name)
		switch {
		case !ok:
			msg := fmt.Sprintf("%q is not a catalogue substance; accepted: a single controlled substance (split blends into their components)", name)
			if _, isBlend := cat.Blend(name); isBlend {
				msg = fmt.Sprintf("%s is a blend; partner figures are compared per substance: split it into its controlled components", name)
			}
			b.add(&FieldViolation{f + ".substance", msg})
		case !sub.Group.Controlled():
			b.addf(f+".substance", "%s is not controlled by the Montreal Protocol", sub.Designation)
		default:
			sr.Substance = sub.Designation
		}
		b.tonnes(f+".metric_tonnes", sr.Tonnes)
		sr.Source = b.note(f+".source", r.Source)
		out = append(out, sr)
	}
	if err := b.err(); err != nil {
		return nil, err
	}
	return out, x.w.PutPartnerExports(ctx, out)
}

// PartnerGap is a partner's figure that differs from the recorded imports from it by more
// than the tolerance.
type PartnerGap struct {
	Partner, Substance string
	PartnerTonnes      exact.Decimal
	RecordedTonnes     exact.Decimal
	GapTonnes          exact.Decimal // partner − recorded, exact
	ShipmentIDs        []int64
	ReportKeys         []string
}

// Reconciliation compares one year's partner figures with the recorded imports.
type Reconciliation struct {
	Year                 int
	Tolerance            exact.Decimal
	PairsCompared        int
	PartnersNotReporting []string
	Gaps                 []PartnerGap
}

// ReconcilePartnerExports compares a year's partner figures with the recorded imports,
// in one snapshot. tolerance 0 means DefaultReconcileTolerance, minGap 0
// DefaultReconcileMinGap.
func (c *Consumption) ReconcilePartnerExports(ctx context.Context, year int, tolerance, minGap exact.Decimal) (Reconciliation, error) {
	var vs []FieldViolation
	if v := CheckQueryYear("year", year); v != nil {
		vs = append(vs, *v)
	}
	if tolerance.Sign() < 0 || tolerance.Cmp(exact.FromInt(1)) >= 0 {
		vs = append(vs, FieldViolation{"tolerance_ratio", fmt.Sprintf("is %v; accepted: a fraction from 0 (the default, %v) to below 1", tolerance, DefaultReconcileTolerance)})
	}
	if minGap.Sign() < 0 || minGap.Cmp(exact.FromInt(maxTonnes)) > 0 {
		vs = append(vs, FieldViolation{"min_gap_tonnes", fmt.Sprintf("is %v; accepted: metric tonnes ≥ 0 (0: %v)", minGap, DefaultReconcileMinGap)})
	}
	if err := invalid(vs...); err != nil {
		return Reconciliation{}, err
	}
	if tolerance.IsZero() {
		tolerance = DefaultReconcileTolerance
	}
	if minGap.IsZero() {
		minGap = DefaultReconcileMinGap
	}
	var reports []PartnerExport
	var lines []ShipmentLine
	err := c.reports.Snapshot(ctx, func(r ReportReader) error {
		var err error
		if reports, err = r.PartnerExports(ctx, year); err != nil {
			return err
		}
		lines, err = r.ShipmentLines(ctx, year)
		return err
	})
	if err != nil {
		return Reconciliation{}, err
	}
	return reconcile(year, tolerance, minGap, reports, lines), nil
}

func reconcile(year int, tol, minGap exact.Decimal, reports []PartnerExport, lines []ShipmentLine) Reconciliation {
	type pair struct{ partner, substance string }
	type side struct {
		partner, recorded exact.Decimal
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
	reporting := map[string]bool{}
	for _, r := range reports {
		s := get(pair{r.Partner, r.Substance})
		s.partner = s.partner.Add(r.Tonnes)
		s.keys = append(s.keys, r.Key)
		reporting[r.Partner] = true
	}
	var silent []string
	for _, l := range lines {
		// Imports only, controlled components only, from the partner named on the record.
		if l.Direction != terms.DirectionImport || l.AnnexGroup == "" {
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
		s.recorded = s.recorded.Add(l.Tonnes)
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
	out := Reconciliation{Year: year, Tolerance: tol, PairsCompared: len(keys), PartnersNotReporting: silent}
	for _, k := range keys {
		s := pairs[k]
		gap := s.partner.Sub(s.recorded)
		if gap.Abs().Cmp(minGap) <= 0 || gap.Abs().Cmp(tol.Mul(exact.Max(s.partner, s.recorded))) <= 0 {
			continue
		}
		slices.Sort(s.ids)
		out.Gaps = append(out.Gaps, PartnerGap{Partner: k.partner, Substance: k.substance, PartnerTonnes: s.partner,
			RecordedTonnes: s.recorded, GapTonnes: gap, ShipmentIDs: slices.Compact(s.ids), ReportKeys: s.keys})
	}
	return out
}
