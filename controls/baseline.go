package controls

import (
	"fmt"
	"slices"
	"strings"

	"github.com/halovet/halovet/exact"
)

// YearAmount is one base year's consumption in a baseline's unit.
type YearAmount struct {
	Year    int
	Amount  exact.Decimal
	HasData bool // false when no record of the scope exists for the year
}

// Gap names data a baseline lacks: a scope (Annex group, or F) and a year.
type Gap struct {
	Scope Scope
	Year  int
	Part  string // which part of the baseline: "" for the scope's own base years, "CFC term", "HCFC component", ...
}

func (g Gap) String() string {
	s := fmt.Sprintf("%s %d: no consumption data for %s", g.Scope, g.Year, g.Scope.label())
	if g.Part != "" {
		s += " (" + g.Part + ")"
	}
	return s
}

// Baseline is a computed baseline with its arithmetic. Value = Mean + CFCTerm +
// HCFCComponent, in decimal arithmetic; the means (divisions by the number of base years)
// are rounded to the unit's derived places (exact.Units), every other step is exact.
type Baseline struct {
	Scope     Scope
	AppliesTo string // rulebook key: "non-A5", "A5", "non-A5-variant", "A5-group1", "A5-group2"
	Unit      Unit
	Rule      BaselineRule

	// Value is the baseline; it is 0 and meaningless when Complete is false.
	Value    exact.Decimal
	Complete bool
	Missing  []Gap // what is missing when Complete is false, in order of discovery

	Years []YearAmount  // the scope's consumption in each base year
	Mean  exact.Decimal // mean of Years (0 when a year is missing)

	// CFC term (non-A5 HCFC baseline): CFCShare × mean A/I consumption over CFCYears.
	CFCShare exact.Decimal // fraction, e.g. 0.028; 0 when the rule adds no term
	CFCYears []YearAmount
	CFCTerm  exact.Decimal

	// HCFC component (HFC baselines): HCFCShare × HCFC.Value, where HCFC is the Party
	// type's HCFC baseline recomputed in CO2-eq from base-year tonnages per substance.
	HCFCShare     exact.Decimal // fraction, e.g. 0.15, 0.25, 0.65; 0 for other scopes
	HCFC          *Baseline
	HCFCComponent exact.Decimal

	Notes []string
}

// RuleText is the baseline rule's source and status, e.g. "Art. 2F para 1 [V]".
func (b Baseline) RuleText() string { return b.Rule.Text() }

// Baseline computes a Party's baseline for a scope from its records, following the
// rulebook's baseline definition. Missing base-year data are not an error: the result has
// Complete false and names each gap. The error reports invalid input, or wraps ErrNoRule
// when the rulebook defines no baseline for the Party and scope.
func (rb *Rulebook) Baseline(records []Record, party Party, scope Scope) (Baseline, error) {
	rule, err := rb.BaselineRule(party, scope)
	if err != nil {
		return Baseline{}, err
	}
	l, err := newLedger(records)
	if err != nil {
		return Baseline{}, err
	}
	return rb.baselineOf(l, party, rule, scope.Unit(), "")
}

func joinPart(outer, inner string) string {
	if outer == "" {
		return inner
	}
	return outer + ", " + inner
}

func (rb *Rulebook) baselineOf(l *ledger, party Party, rule BaselineRule, unit Unit, part string) (Baseline, error) {
	counting := ExcludeUsed
	if rule.CountUsed {
		counting = IncludeUsed
	}
	cons, err := l.consumption(counting)
	if err != nil {
		return Baseline{}, err
	}
	b := Baseline{Scope: rule.Scope, AppliesTo: rule.AppliesTo, Unit: unit, Rule: rule}
	b.Notes = append(b.Notes, fmt.Sprintf("%s: %s (%s)", rule.Scope, rule.Description(), rule.Text()))
	if rule.CountUsed {
		b.Notes = append(b.Notes, fmt.Sprintf(
			"used, recycled and reclaimed imports and exports are counted in these base years (Decision IV/24 para 2 exception; %s)",
			rule.CountUsedStatus.Meaning()))
	}
	if rule.Note != "" {
		b.Notes = append(b.Notes, rule.Note)
	}

	var gaps []Gap
	b.Years, b.Mean, gaps = series(cons, rule.Scope, unit, rule.FromYear, rule.ToYear, part)
	b.Missing = append(b.Missing, gaps...)
	b.Notes = append(b.Notes, zeroGWPNotes(cons, rule.Scope, unit, rule.FromYear, rule.ToYear)...)

	switch rule.Term {
	case TermCFC:
		b.CFCShare = exact.OfFloat(rule.TermPercent).Shift(-2)
		var mean exact.Decimal
		b.CFCYears, mean, gaps = series(cons, ScopeAI, unit, rule.FromYear, rule.ToYear, joinPart(part, "CFC term"))
		b.Missing = append(b.Missing, gaps...)
		b.CFCTerm = derivedProduct(b.CFCShare.Mul(mean), unit)
		b.Notes = append(b.Notes, zeroGWPNotes(cons, ScopeAI, unit, rule.FromYear, rule.ToYear)...)
	case TermHCFCCO2e:
		b.HCFCShare = exact.OfFloat(rule.TermPercent).Shift(-2)
		hr, err := rb.baselineRule(party.typeKey(), ScopeCI)
		if err != nil {
			return Baseline{}, fmt.Errorf("HCFC component of the %s baseline: %w", rule.Scope, err)
		}
		h, err := rb.baselineOf(l, party, hr, UnitCO2eTonnes, joinPart(part, "HCFC component"))
		if err != nil {
			return Baseline{}, err
		}
		b.HCFC = &h
		b.Missing = append(b.Missing, h.Missing...)
		if h.Complete {
			b.HCFCComponent = derivedProduct(b.HCFCShare.Mul(h.Value), unit)
		}
	}
	b.Complete = len(b.Missing) == 0
	if b.Complete {
		b.Value = exact.Sum(b.Mean, b.CFCTerm, b.HCFCComponent)
	}
	return b, nil
}

// series returns a scope's consumption in each year from..to in unit, their mean (0 when a
// year is missing; rounded to the unit's derived places) and the gaps.
func series(cons Consumption, scope Scope, unit Unit, from, to int, part string) ([]YearAmount, exact.Decimal, []Gap) {
	var ys []YearAmount
	var gaps []Gap
	sum := exact.Zero
	for y := from; y <= to; y++ {
		amt, ok := cons.Amount(y, scope, unit)
		ys = append(ys, YearAmount{Year: y, Amount: amt, HasData: ok})
		if !ok {
			gaps = append(gaps, Gap{Scope: scope, Year: y, Part: part})
		}
		sum = sum.Add(amt)
	}
	if len(gaps) > 0 {
		return ys, exact.Zero, gaps
	}
	return ys, exact.Derive(sum, exact.FromInt(int64(to-from+1)), unit.Exact()), nil
}

// zeroGWPNotes names substances counted in CO2-eq that have no Protocol GWP: they count as 0
// (Annex C footnote [V]).
func zeroGWPNotes(cons Consumption, scope Scope, unit Unit, from, to int) []string {
	if unit != UnitCO2eTonnes {
		return nil
	}
	var names []string
	for y := from; y <= to; y++ {
		for _, g := range scope.Groups() {
			gc, ok := cons.Group(y, g)
			if !ok {
				continue
			}
			for _, s := range gc.Substances {
				if s.Substance.GWP.IsZero() && !s.Tonnes.IsZero() && !slices.Contains(names, s.Substance.Designation) {
					names = append(names, s.Substance.Designation)
				}
			}
		}
	}
	if len(names) == 0 {
		return nil
	}
	slices.Sort(names)
	return []string{fmt.Sprintf("%s: no GWP listed in the Protocol's Annexes, counted as 0 CO2-eq t (Annex C footnote [V])",
		strings.Join(names, ", "))}
}
