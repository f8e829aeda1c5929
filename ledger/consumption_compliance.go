package ledger

import (
	"context"
	"fmt"
	"slices"
	"strings"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// ComplianceReport is a scope's consumption compared with the allowed levels, year by year.
type ComplianceReport struct {
	Assessment controls.Assessment
	// Baseline is the computed baseline, shown even when no assessed year needed it
	// (0 % steps); nil when it cannot be computed.
	Baseline        *controls.Baseline
	BaselineMissing []string
	// YearNotes are notes per assessed year beyond the assessment's own (exempted uses).
	YearNotes      map[int][]string
	ScheduleSource string
}

// AssessCompliance assesses the reporting Party's compliance in a scope from..to.
func (c *Consumption) AssessCompliance(ctx context.Context, annexGroup string, from, to int) (ComplianceReport, error) {
	scope, fv := ParseScope("annex_group", annexGroup)
	if fv != nil {
		return ComplianceReport{}, invalid(*fv)
	}
	var vs []FieldViolation
	if v := CheckQueryYear("from_year", from); v != nil {
		vs = append(vs, *v)
	}
	if v := CheckQueryYear("to_year", to); v != nil {
		vs = append(vs, *v)
	}
	if len(vs) == 0 && to < from {
		vs = append(vs, FieldViolation{"to_year", fmt.Sprintf("%d is before from_year %d", to, from)})
	}
	if err := invalid(vs...); err != nil {
		return ComplianceReport{}, err
	}
	cat, rb := c.catalogue(), c.rulebook
	var out ComplianceReport
	err := c.reports.Snapshot(ctx, func(r ReportReader) error {
		p, party, err := scopeRules(ctx, r, scope)
		if err != nil {
			return err
		}
		years := append(YearRange(from, to), BaselineYears(rb, party, scope)...)
		for y := from; y <= to; y++ {
			if al, err := rb.Allowance(party, scope, y); err == nil && al.Average != nil {
				years = append(years, YearRange(al.Average.FromYear, y)...)
			}
		}
		d, err := load(ctx, r, cat, uniqueYears(years))
		if err != nil {
			return arithmetic(err)
		}
		ov, err := overrides(ctx, r, p.Code, scope)
		if err != nil {
			return err
		}
		a, err := rb.AssessWith(d.Records, party, scope, from, to, ov)
		if err != nil {
			return arithmetic(err)
		}
		out = ComplianceReport{Assessment: a, Baseline: a.Baseline, YearNotes: map[int][]string{}}
		if out.Baseline == nil {
			if bb, err := rb.Baseline(d.Records, party, scope); err == nil {
				out.Baseline = &bb
			}
		}
		if b := out.Baseline; b != nil {
			for _, g := range b.Missing {
				out.BaselineMissing = append(out.BaselineMissing, controls.GapText(g, d.stored(), BaselineYears(rb, party, scope)))
			}
		}
		var sources []string
		for _, y := range a.Years {
			for _, rl := range []*controls.Rule{y.Step, y.Servicing} {
				if rl != nil && !slices.Contains(sources, rl.Text()) {
					sources = append(sources, rl.Text())
				}
			}
			if y.Period != nil && !slices.Contains(sources, y.Period.Rule.Text()) {
				sources = append(sources, y.Period.Rule.Text())
			}
			if len(y.Exemptions) > 0 {
				notes, err := exemptedUseNotes(ctx, r, cat, scope, y.Year, y.Exemptions)
				if err != nil {
					return err
				}
				out.YearNotes[y.Year] = notes
			}
		}
		out.ScheduleSource = fmt.Sprintf("rulebook %s as of %s", a.RulebookVersion, a.RulebookAsOf)
		if len(sources) > 0 {
			out.ScheduleSource += ": " + strings.Join(sources, "; ")
		}
		return nil
	})
	return out, err
}

// exemptionPurpose is the declared purpose of the shipments of an exempted use.
var exemptionPurpose = map[controls.ExemptionUse]terms.Purpose{
	controls.UseEssential: terms.PurposeEssentialUse, controls.UseCritical: terms.PurposeCriticalUse, controls.UseLaboratory: terms.PurposeLaboratory,
}

// exemptedUseNotes compares each authorised exemption of a year with the imports declared
// for its use, in the scope's unit: an exemption raises the limit, and the notes show how
// much of it recorded imports for the use cover (domestic production for the use is not
// in the register's shipments, so the rest is for the officer to check).
func exemptedUseNotes(ctx context.Context, r ReportReader, cat *substances.Catalogue, scope controls.Scope, year int, es []controls.Exemption) ([]string, error) {
	ships, err := r.ShipmentTotals(ctx, []int{year})
	if err != nil {
		return nil, err
	}
	unit := scope.Unit()
	declared := map[terms.Purpose]exact.Decimal{}
	for _, t := range ships {
		sub, ok := cat.Substance(t.Designation)
		if !ok || t.Direction != terms.DirectionImport || controls.Recovered(t.Condition) || !slices.Contains(scope.Groups(), sub.Group) {
			continue
		}
		f := controls.SubstanceOf(sub)
		factor := f.ODP
		if unit == controls.UnitCO2eTonnes {
			factor = f.GWP
		}
		declared[t.Purpose] = declared[t.Purpose].Add(t.Tonnes.Mul(factor))
	}
	var notes []string
	for _, e := range es {
		p, ok := exemptionPurpose[e.Use]
		if !ok {
			continue // high-ambient-temperature: no declared purpose of its own
		}
		notes = append(notes, fmt.Sprintf("%s-use exemption %s %s; imports declared for %s: %s %s (production for the use, if any, is not in the shipments)",
			e.Use, controls.FormatTonnes(e.Amount), unit, p, controls.FormatTonnes(declared[p]), unit))
	}
	return notes, nil
}
