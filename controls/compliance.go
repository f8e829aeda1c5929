package controls

import (
	"errors"
	"fmt"
	"strings"

	"github.com/halovet/halovet/exact"
)

// Outcome is the verdict for one year.
type Outcome int

// Outcomes.
const (
	// NotAssessed: data, baseline or rule missing; the notes say what.
	NotAssessed Outcome = iota
	// Within: consumption within the allowed level (or, in a period-average year, the
	// period's total so far within the period's budget).
	Within
	// Exceeded: consumption above the allowed level (or the period's budget used up).
	Exceeded
)

func (o Outcome) String() string {
	switch o {
	case Within:
		return "within"
	case Exceeded:
		return "exceeded"
	}
	return "not assessed"
}

// The comparison of consumption with the allowed level is exact: every figure is a decimal
// (package exact), so 0.1 + 0.2 t is 0.3 t and a year at its limit is within it.

// PeriodProgress reports a period-average rule (A5 HCFC 2030–2039) from its first year up
// to the assessed year.
type PeriodProgress struct {
	Rule           Rule
	YearsCounted   int           // years of the period up to and including the assessed year
	YearsRemaining int           // years of the period after the assessed year
	Sum            exact.Decimal // consumption summed over the counted years
	RunningMean    exact.Decimal // Sum / YearsCounted, to the unit's derived places
	RunningPercent exact.Decimal // RunningMean as percent of the baseline, to 6 places; 0 when the baseline is 0
	Budget         exact.Decimal // Rule.Percent of baseline × years in the period
	RoomLeft       exact.Decimal // Budget − Sum: what the remaining years may still use in total
	RoomPerYear    exact.Decimal // RoomLeft / YearsRemaining, to the unit's derived places; 0 when no year remains
}

// YearAssessment is one year's comparison of consumption with the allowed level.
type YearAssessment struct {
	Year           int
	Consumption    exact.Decimal // calculated consumption in the scope's unit
	HasData        bool
	HasRule        bool          // a control step is in force (AllowedPercent is set)
	AllowedPercent exact.Decimal // percent of baseline the year is measured against
	// Assessed is true when Allowed and ComputedAllowed are computed (a rule and, when
	// needed, a complete baseline exist).
	Assessed bool
	// Allowed is the level consumption is compared with: the official limit when one is
	// set (else baseline × AllowedPercent / 100), plus the authorised exemptions.
	Allowed exact.Decimal
	// ComputedAllowed is baseline × AllowedPercent / 100, from the treaty's schedule and the
	// baseline used (the official one when set).
	ComputedAllowed exact.Decimal
	// OfficialLimit is the year's limit as officially set, when there is one.
	OfficialLimit *OfficialFigure
	// Exempted is the sum of Exemptions, added to the limit.
	Exempted   exact.Decimal
	Exemptions []Exemption
	// Headroom is Allowed − Consumption; negative when exceeded. In a period-average year it
	// is the period's room left (PeriodProgress.RoomLeft) instead.
	Headroom  exact.Decimal
	Outcome   Outcome
	Step      *Rule // the step in force; nil when there is none
	Servicing *Rule // an annual servicing cap in force, if any
	Period    *PeriodProgress
	Notes     []string
}

// Assessment compares consumption with the control schedule over a range of years.
type Assessment struct {
	Scope     Scope
	AppliesTo string
	Unit      Unit
	Baseline  *Baseline // computed; nil when no assessed year needed one (0 % steps need none)
	// OfficialBaseline is the baseline as officially set, when given: it is the one used.
	OfficialBaseline *OfficialFigure
	Years            []YearAssessment
	RulebookVersion  string
	RulebookAsOf     string
}

// Assess compares a Party's consumption in a scope with the allowed level for each year
// from..to. Years lacking data, a baseline or a rule are reported NotAssessed with notes;
// the error reports invalid input only.
func (rb *Rulebook) Assess(records []Record, party Party, scope Scope, from, to int) (Assessment, error) {
	return rb.AssessWith(records, party, scope, from, to, Overrides{})
}

// AssessWith is Assess with figures set outside the arithmetic: an official baseline is
// used instead of the computed one (both are reported), an official limit instead of the
// schedule's level, and each year's authorised exemptions are added to its limit.
func (rb *Rulebook) AssessWith(records []Record, party Party, scope Scope, from, to int, ov Overrides) (Assessment, error) {
	if err := scope.check("scope"); err != nil {
		return Assessment{}, err
	}
	key, err := party.key(scope)
	if err != nil {
		return Assessment{}, err
	}
	if err := checkYear("from_year", from); err != nil {
		return Assessment{}, err
	}
	if err := checkYear("to_year", to); err != nil {
		return Assessment{}, err
	}
	if to < from {
		return Assessment{}, fieldErr("to_year", "a year not before from_year", "%d is before from_year %d", to, from)
	}
	l, err := newLedger(records)
	if err != nil {
		return Assessment{}, err
	}
	cons, err := l.consumption(ExcludeUsed)
	if err != nil {
		return Assessment{}, err
	}
	unit := scope.Unit()
	out := Assessment{Scope: scope, AppliesTo: key, Unit: unit, RulebookVersion: rb.Version, RulebookAsOf: rb.AsOf,
		OfficialBaseline: ov.Baseline}
	base := &baselineCache{rb: rb, l: l, party: party, scope: scope}
	for y := from; y <= to; y++ {
		ya, err := rb.assessYear(cons, base, party, scope, y, ov)
		if err != nil {
			return Assessment{}, err
		}
		out.Years = append(out.Years, ya)
	}
	if base.done && base.err == nil {
		out.Baseline = &base.b
	}
	return out, nil
}

// baselineCache computes the baseline once, on first need.
type baselineCache struct {
	rb    *Rulebook
	l     *ledger
	party Party
	scope Scope
	done  bool
	b     Baseline
	err   error
}

func (c *baselineCache) get() (Baseline, error) {
	if !c.done {
		c.done = true
		var rule BaselineRule
		rule, c.err = c.rb.BaselineRule(c.party, c.scope)
		if c.err == nil {
			c.b, c.err = c.rb.baselineOf(c.l, c.party, rule, c.scope.Unit(), "")
		}
	}
	return c.b, c.err
}

func (rb *Rulebook) assessYear(cons Consumption, base *baselineCache, party Party, scope Scope, y int, ov Overrides) (YearAssessment, error) {
	unit := scope.Unit()
	ya := YearAssessment{Year: y}
	ya.Exempted, ya.Exemptions = ov.exempted(y)
	if lim, ok := ov.Limits[y]; ok {
		ya.OfficialLimit = &lim
	}
	ya.Consumption, ya.HasData = cons.Amount(y, scope, unit)
	if !ya.HasData {
		ya.Notes = append(ya.Notes, fmt.Sprintf("no data: no record for %s in %d", scope.label(), y))
	}
	al, err := rb.Allowance(party, scope, y)
	if errors.Is(err, ErrNoRule) {
		ya.Notes = append(ya.Notes, strings.TrimPrefix(err.Error(), ErrNoRule.Error()+": "))
		return ya, nil
	}
	if err != nil {
		return YearAssessment{}, err
	}
	step := al.Step
	ya.Step = &step
	ya.Servicing = al.Servicing
	ya.HasRule = true
	ya.AllowedPercent = exact.OfFloat(al.Percent())
	ya.Notes = append(ya.Notes, ruleNotes(step, fmt.Sprintf("step in force: %s %% of baseline from %d", fmtPercent(step.Percent), step.FromYear))...)
	if al.Servicing != nil {
		s := al.Servicing
		ya.Notes = append(ya.Notes, ruleNotes(*s, fmt.Sprintf("annual servicing cap %d–%d: each year may reach %s %% of baseline",
			s.FromYear, s.ToYear, fmtPercent(s.Percent)))...)
	}
	if al.Average != nil {
		a := al.Average
		ya.Notes = append(ya.Notes, ruleNotes(*a, fmt.Sprintf("period average %d–%d: the mean over the period may reach %s %% of baseline; a single year may exceed it",
			a.FromYear, a.ToYear, fmtPercent(a.Percent)))...)
	}

	needBaseline := ya.AllowedPercent.Sign() > 0 || al.Average != nil
	baseline := exact.Zero
	if needBaseline && ov.Baseline != nil {
		baseline = ov.Baseline.Value
		ya.Notes = append(ya.Notes, fmt.Sprintf("baseline as officially set: %s %s (%s); the computed baseline is reported beside it",
			fmtAmount(baseline, unit), unit, ov.Baseline.Source))
		needBaseline = false
	}
	if needBaseline {
		b, err := base.get()
		if errors.Is(err, ErrNoRule) {
			ya.Notes = append(ya.Notes, strings.TrimPrefix(err.Error(), ErrNoRule.Error()+": "))
			return ya, nil
		}
		if err != nil {
			return YearAssessment{}, err
		}
		if !b.Complete {
			ya.Notes = append(ya.Notes, "baseline incomplete: "+gapList(b.Missing))
			return ya, nil
		}
		baseline = b.Value
	}
	ya.ComputedAllowed = derivedProduct(baseline.Percent(ya.AllowedPercent), unit)
	ya.Allowed = ya.ComputedAllowed
	ya.Assessed = true

	if al.Average != nil {
		if ya.OfficialLimit != nil || !ya.Exempted.IsZero() {
			ya.Notes = append(ya.Notes, "an official limit or exemption of a period-average year is reported, not applied: the period's budget is the treaty's")
		}
		return periodYear(cons, ya, *al.Average, scope, baseline), nil
	}
	if lim := ya.OfficialLimit; lim != nil {
		ya.Allowed = lim.Value
		ya.Notes = append(ya.Notes, fmt.Sprintf("limit as officially set: %s %s (%s), in place of the schedule's %s %s",
			fmtAmount(ya.Allowed, unit), unit, lim.Source, fmtAmount(ya.ComputedAllowed, unit), unit))
		if ya.Allowed.Cmp(ya.ComputedAllowed) > 0 {
			ya.Notes = append(ya.Notes, "check: the official limit is above the treaty's level; the treaty prevails over a looser figure")
		}
	}
	for _, e := range ya.Exemptions {
		ya.Notes = append(ya.Notes, fmt.Sprintf("authorised %s-use exemption: %s %s (%s), added to the limit",
			e.Use, fmtAmount(e.Amount, unit), unit, e.Source))
	}
	ya.Allowed = ya.Allowed.Add(ya.Exempted)
	if !ya.HasData {
		return ya, nil
	}
	ya.Headroom = ya.Allowed.Sub(ya.Consumption)
	ya.Outcome = Exceeded
	if ya.Headroom.Sign() >= 0 {
		ya.Outcome = Within
	}
	return ya, nil
}

// ruleNotes describes a rule with its source, status and note.
func ruleNotes(r Rule, what string) []string {
	n := []string{fmt.Sprintf("%s (%s)", what, r.Text())}
	if r.Status != Verified {
		n = append(n, fmt.Sprintf("rule status %s: %s", r.Status, r.Status.Meaning()))
	}
	if r.Note != "" {
		n = append(n, r.Note)
	}
	return n
}

func gapList(gaps []Gap) string {
	s := make([]string, len(gaps))
	for i, g := range gaps {
		s[i] = g.String()
	}
	return strings.Join(s, "; ")
}

// periodYear assesses a year under a period-average rule: the running mean so far and the
// room left for the rest of the period.
func periodYear(cons Consumption, ya YearAssessment, rule Rule, scope Scope, baseline exact.Decimal) YearAssessment {
	unit := scope.Unit()
	var missing []string
	sum := exact.Zero
	for y := rule.FromYear; y <= ya.Year; y++ {
		amt, ok := cons.Amount(y, scope, unit)
		if !ok {
			missing = append(missing, fmt.Sprint(y))
		}
		sum = sum.Add(amt)
	}
	if len(missing) > 0 {
		ya.Notes = append(ya.Notes, fmt.Sprintf("running mean needs every year since %d; no data for %s in %s",
			rule.FromYear, scope, strings.Join(missing, ", ")))
		return ya
	}
	total := rule.ToYear - rule.FromYear + 1
	p := &PeriodProgress{Rule: rule, YearsCounted: ya.Year - rule.FromYear + 1, Sum: sum}
	p.YearsRemaining = total - p.YearsCounted
	eu := unit.Exact()
	p.RunningMean = exact.Derive(sum, exact.FromInt(int64(p.YearsCounted)), eu)
	if !baseline.IsZero() {
		// From the exact sum, not the rounded mean: sum × 100 / (baseline × years).
		p.RunningPercent = exact.Derive(sum.Mul(exact.Hundred), baseline.Mul(exact.FromInt(int64(p.YearsCounted))), exact.Percent)
	}
	p.Budget = derivedProduct(baseline.Percent(exact.OfFloat(rule.Percent)).Mul(exact.FromInt(int64(total))), unit)
	p.RoomLeft = p.Budget.Sub(sum)
	if p.YearsRemaining > 0 {
		p.RoomPerYear = exact.Derive(p.RoomLeft, exact.FromInt(int64(p.YearsRemaining)), eu)
	}
	ya.Period = p
	ya.Headroom = p.RoomLeft
	ya.Outcome = Exceeded
	if p.RoomLeft.Sign() >= 0 {
		ya.Outcome = Within
	}
	ya.Notes = append(ya.Notes, fmt.Sprintf("running mean %s: %s %s a year (%s %% of baseline) over %s",
		yearSpan(rule.FromYear, ya.Year), fmtAmount(p.RunningMean, unit), unit, p.RunningPercent.Fixed(3), plural(p.YearsCounted, "year")))
	if p.YearsRemaining > 0 {
		ya.Notes = append(ya.Notes, fmt.Sprintf("room left: %s %s for the remaining %s (%s a year on average)",
			fmtAmount(p.RoomLeft, unit), unit, plural(p.YearsRemaining, "year"), fmtAmount(p.RoomPerYear, unit)))
	} else {
		verdict := "met"
		if ya.Outcome == Exceeded {
			verdict = "not met"
		}
		ya.Notes = append(ya.Notes, fmt.Sprintf("period complete: mean %s %% of baseline against %s %%: %s",
			p.RunningPercent.Fixed(3), fmtPercent(rule.Percent), verdict))
	}
	if ya.Outcome == Exceeded && p.YearsRemaining > 0 {
		ya.Notes = append(ya.Notes, "the period's total already exceeds its budget")
	}
	return ya
}

func yearSpan(from, to int) string {
	if from == to {
		return fmt.Sprint(from)
	}
	return fmt.Sprintf("%d–%d", from, to)
}

func plural(n int, word string) string {
	if n == 1 {
		return "1 " + word
	}
	return fmt.Sprintf("%d %ss", n, word)
}

// derivedProduct rounds a product of a baseline (a mean, itself rounded to the unit's
// derived places) to those places: 1937674.666666667 × 60 % is 1162604.8, not
// 1162604.8000000002, whose last digit only repeats the rounding of the mean.
func derivedProduct(v exact.Decimal, u Unit) exact.Decimal {
	return v.Round(u.Exact().Spec().DerivedPlaces)
}

// fmtAmount rounds for presentation only: 0.001 for tonnes and ODP tonnes, 1 for CO2-eq.
func fmtAmount(v exact.Decimal, u Unit) string {
	if u == UnitCO2eTonnes {
		return v.Fixed(0)
	}
	return v.Fixed(3)
}

// Level is the allowed level for one year, e.g. to plan next year's quotas.
type Level struct {
	Year      int
	Scope     Scope
	Unit      Unit
	Percent   exact.Decimal // percent of baseline
	Value     exact.Decimal // baseline × Percent / 100, exact; the period's mean level in a period-average year
	Allowance Allowance
	Baseline  *Baseline // nil when the percent is 0 and no baseline was needed
	Notes     []string
}

// AllowedLevel returns the allowed level for a Party, scope and year. The error wraps
// ErrNoRule when no control step is in force, ErrIncompleteBaseline when the baseline lacks
// data (naming the gaps), or ErrInvalidInput.
func (rb *Rulebook) AllowedLevel(records []Record, party Party, scope Scope, year int) (Level, error) {
	al, err := rb.Allowance(party, scope, year)
	if err != nil {
		return Level{}, err
	}
	lv := Level{Year: year, Scope: scope, Unit: scope.Unit(), Percent: exact.OfFloat(al.Percent()), Allowance: al}
	lv.Notes = ruleNotes(al.Step, fmt.Sprintf("step in force: %s %% of baseline from %d", fmtPercent(al.Step.Percent), al.Step.FromYear))
	if al.Servicing != nil {
		lv.Notes = append(lv.Notes, ruleNotes(*al.Servicing, "annual servicing cap; only servicing uses may draw on it")...)
	}
	if al.Average != nil {
		lv.Notes = append(lv.Notes, ruleNotes(*al.Average, fmt.Sprintf(
			"period average %d–%d: Value is the period's mean level; single years may differ as long as the period's mean stays within it (see Assess for the room left)",
			al.Average.FromYear, al.Average.ToYear))...)
	}
	if lv.Percent.IsZero() && al.Average == nil {
		if _, err := newLedger(records); err != nil {
			return Level{}, err
		}
		return lv, nil
	}
	b, err := rb.Baseline(records, party, scope)
	if err != nil {
		return Level{}, err
	}
	if !b.Complete {
		return Level{}, fmt.Errorf("%w: %s %s: %s", ErrIncompleteBaseline, lv.Scope, b.AppliesTo, gapList(b.Missing))
	}
	lv.Baseline = &b
	lv.Value = derivedProduct(b.Value.Percent(lv.Percent), lv.Unit)
	return lv, nil
}
