package ledger

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"
	"time"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// Consumption holds the consumption, baseline, compliance and quota-planning workflows of
// the reporting Party. Each question reads the register in one snapshot (Reports), so
// its figures never mix two states of the register.
type Consumption struct {
	reports   Reports
	drafts    DraftIssuer
	catalogue func() *substances.Catalogue
	rulebook  *controls.Rulebook
	now       func() time.Time
}

// ConsumptionOptions configure NewConsumption.
type ConsumptionOptions struct {
	// Catalogue returns the current catalogue snapshot; required.
	Catalogue func() *substances.Catalogue
	// Drafts stores the drafts of a quota plan; nil refuses issuing them.
	Drafts DraftIssuer
	// Rulebook gives the control schedules and baselines; nil means the embedded one.
	Rulebook *controls.Rulebook
	// Now is the clock; nil means time.Now.
	Now func() time.Time
}

// NewConsumption returns the workflows over reports.
func NewConsumption(reports Reports, o ConsumptionOptions) *Consumption {
	if o.Catalogue == nil {
		panic("ledger.NewConsumption: Catalogue is nil")
	}
	if o.Rulebook == nil {
		o.Rulebook = defaultRulebook()
	}
	if o.Now == nil {
		o.Now = time.Now
	}
	return &Consumption{reports: reports, drafts: o.Drafts, catalogue: o.Catalogue, rulebook: o.Rulebook, now: o.Now}
}

// recorded is what the arithmetic reads for a set of years.
type recorded struct {
	controls.Recorded
	nStored int // the records read from the register (the first nStored of Records)
}

func (r recorded) stored() []controls.Record { return r.Records[:r.nStored] }

// load reads shipment and national totals for the years (every year when years is nil)
// and classifies them with the catalogue's ODPs and Protocol GWPs.
func load(ctx context.Context, r ReportReader, cat *substances.Catalogue, years []int) (recorded, error) {
	ships, err := r.ShipmentTotals(ctx, years)
	if err != nil {
		return recorded{}, err
	}
	nats, err := r.NationalTotals(ctx, years)
	if err != nil {
		return recorded{}, err
	}
	shipYears, err := r.ShipmentYears(ctx)
	if err != nil {
		return recorded{}, err
	}
	d, err := controls.ClassifyRecorded(cat, years, ships, nats, shipYears)
	return recorded{Recorded: d, nStored: len(d.Records)}, err
}

// CheckQueryYear refuses a year outside the arithmetic's range.
func CheckQueryYear(field string, y int) *FieldViolation {
	if y < controls.MinYear || y > controls.MaxYear {
		return &FieldViolation{field, fmt.Sprintf("is %d; accepted: a calendar year from %d to %d", y, controls.MinYear, controls.MaxYear)}
	}
	return nil
}

// ParseScope reads an Annex group or "F" from a request field.
func ParseScope(field, v string) (controls.Scope, *FieldViolation) {
	if strings.TrimSpace(v) == "" {
		return "", &FieldViolation{field, "is empty; accepted: A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I or F (Annex F as a whole)"}
	}
	sc, err := controls.ParseScope(v)
	if err != nil {
		return "", &FieldViolation{field, fmt.Sprintf("%q is not a control scope; accepted: A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I or F (Annex F as a whole)", v)}
	}
	return sc, nil
}

func scopeOrInvalid(field, v string) (controls.Scope, error) {
	sc, fv := ParseScope(field, v)
	if fv != nil {
		return "", invalid(*fv)
	}
	return sc, nil
}

// reportingParty reads the reporting Party and maps it to the control schedules' terms.
func reportingParty(ctx context.Context, r ReportReader) (Party, controls.Party, error) {
	p, err := r.ReportingParty(ctx)
	if errors.Is(err, ErrNoReportingParty) {
		return p, controls.Party{}, refused(
			"no reporting Party is configured: load the party settings and name the reporting country (SetReportingParty, 'halovet reporting-party CODE', or reporting_party set in a first 'halovet load scenario.json')")
	}
	if err != nil {
		return p, controls.Party{}, err
	}
	cp, err := CheckReportingParty(p)
	return p, cp, err
}

// CheckReportingParty maps the reporting Party's settings to the control schedules' terms,
// refusing settings the schedules cannot use.
func CheckReportingParty(p Party) (controls.Party, error) {
	cp, err := ControlsParty(p.Settings)
	if err != nil {
		return cp, refused(fmt.Sprintf("the reporting Party %s %v; the control schedules need ARTICLE_5 or NON_ARTICLE_5 (PutParty)", p.Code, err))
	}
	if err := cp.Validate(); err != nil {
		return cp, refused(fmt.Sprintf("the reporting Party %s: HFC group %q does not fit party type %q; correct the party settings (PutParty)",
			p.Code, p.Settings.HFCGroup, p.Settings.Type))
	}
	return cp, nil
}

// scopeRules is what a question about a control scope starts with: the reporting Party
// (refused, for an Annex F question, when it has no HFC group).
func scopeRules(ctx context.Context, r ReportReader, scope controls.Scope) (Party, controls.Party, error) {
	p, party, err := reportingParty(ctx, r)
	if err != nil {
		return p, party, err
	}
	if scope == controls.ScopeF && party.HFC == terms.HFCGroupUnspecified {
		return p, party, refused(fmt.Sprintf(
			"the reporting Party %s has no HFC group, and Annex F baselines and schedules depend on it: set hfc_group (A5_GROUP_1, A5_GROUP_2, NON_A5 or NON_A5_VARIANT) with PutParty", p.Code))
	}
	return p, party, nil
}

// arithmetic maps an error of the controls arithmetic on stored data: invalid input
// there, or data it cannot use, is a problem of the register, not of the caller.
func arithmetic(err error) error {
	var fe *controls.FieldError
	var se *controls.StoredDataError
	switch {
	case err == nil:
		return nil
	case errors.As(err, &se):
		return refused(se.Msg)
	case errors.As(err, &fe):
		return refused("the stored data cannot be computed: " + err.Error())
	case errors.Is(err, controls.ErrNoRule), errors.Is(err, controls.ErrIncompleteBaseline):
		return refused(err.Error())
	}
	return err
}

// overrides reads a Party's official figures and exemptions for a scope.
func overrides(ctx context.Context, r ReportReader, country string, scope controls.Scope) (controls.Overrides, error) {
	ov := controls.Overrides{Limits: map[int]controls.OfficialFigure{}, Exemptions: map[int][]controls.Exemption{}}
	fs, err := r.OfficialFigures(ctx)
	if err != nil {
		return ov, err
	}
	for _, f := range fs {
		if f.CountryCode != country || f.Scope != string(scope) {
			continue
		}
		of := controls.OfficialFigure{Value: f.Value, Source: f.Source}
		if f.Kind == "baseline" {
			ov.Baseline = &of
		} else {
			ov.Limits[f.Year] = of
		}
	}
	es, err := r.Exemptions(ctx, 0)
	if err != nil {
		return ov, err
	}
	for _, e := range es {
		if e.CountryCode == country && e.Scope == string(scope) {
			ov.Exemptions[e.Year] = append(ov.Exemptions[e.Year], controls.Exemption{Use: controls.ExemptionUse(e.Use), Amount: e.Amount, Source: e.Source})
		}
	}
	return ov, nil
}

// YearRange lists from..to.
func YearRange(from, to int) []int {
	var ys []int
	for y := from; y <= to; y++ {
		ys = append(ys, y)
	}
	return ys
}

// BaselineYears lists the years a scope's baseline reads: its base years, and for an HFC
// baseline the HCFC baseline's base years too (the CFC term of a non-A5 HCFC baseline
// uses the same years as the HCFC part).
func BaselineYears(rb *controls.Rulebook, party controls.Party, scope controls.Scope) []int {
	var ys []int
	rule, err := rb.BaselineRule(party, scope)
	if err != nil {
		return nil
	}
	ys = append(ys, YearRange(rule.FromYear, rule.ToYear)...)
	if rule.Term == controls.TermHCFCCO2e {
		if hr, err := rb.BaselineRule(controls.Party{Type: party.Type}, controls.ScopeCI); err == nil {
			ys = append(ys, YearRange(hr.FromYear, hr.ToYear)...)
		}
	}
	return ys
}

func uniqueYears(ys []int) []int {
	ys = slices.Clone(ys)
	slices.Sort(ys)
	return slices.Compact(ys)
}

func validGroup(g string) bool {
	return slices.Contains(substances.AllGroups, substances.Group(g))
}

// ConsumptionReport is one year's calculated consumption, per group and substance.
type ConsumptionReport struct {
	Year        int
	CountryCode string // "" when no reporting Party is configured
	// Groups are the groups asked for that have data, in Annex order.
	Groups       []controls.GroupConsumption
	NoDataGroups []substances.Group
	// HFC23 are the facility entries of the year (reported beside Annex F, not part of it),
	// with HFC23GWP the catalogue's Protocol GWP of HFC-23 to express emissions in CO2-eq.
	HFC23    []HFC23Entry
	HFC23GWP exact.Decimal
	Notes    []string
}

// GetConsumption computes one year's consumption; annexGroup, when not empty, keeps one
// Annex group or a scope ("F").
func (c *Consumption) GetConsumption(ctx context.Context, year int, annexGroup string) (ConsumptionReport, error) {
	if v := CheckQueryYear("year", year); v != nil {
		return ConsumptionReport{}, invalid(*v)
	}
	var only []substances.Group
	if g := strings.TrimSpace(annexGroup); g != "" {
		if validGroup(strings.ToUpper(g)) {
			only = []substances.Group{substances.Group(strings.ToUpper(g))}
		} else {
			sc, err := scopeOrInvalid("annex_group", g)
			if err != nil {
				return ConsumptionReport{}, err
			}
			only = sc.Groups()
		}
	}
	keep := func(g substances.Group) bool { return only == nil || slices.Contains(only, g) }
	cat := c.catalogue()
	out := ConsumptionReport{Year: year}
	err := c.reports.Snapshot(ctx, func(r ReportReader) error {
		d, err := load(ctx, r, cat, []int{year})
		if err != nil {
			return arithmetic(err)
		}
		cons, err := controls.Calculate(d.Records, controls.ExcludeUsed)
		if err != nil {
			return arithmetic(err)
		}
		if p, err := r.ReportingParty(ctx); err == nil {
			out.CountryCode = p.Code
		} else if errors.Is(err, ErrNoReportingParty) {
			out.Notes = append(out.Notes, "no reporting Party is configured; the figures are the recorded data's")
		} else {
			return err
		}
		used := exact.Zero
		for _, g := range cons.Groups {
			if !keep(g.Group) {
				continue
			}
			for _, sc := range g.Substances {
				// A substance with all flows 0 is a stated zero (a 0 t entry): data, shown.
				used = exact.Sum(used, sc.Flows.UsedImports, sc.Flows.UsedExports)
			}
			out.Groups = append(out.Groups, g)
		}
		var noData []string
		for _, g := range substances.AllGroups {
			if _, ok := cons.Group(year, g); keep(g) && !ok {
				out.NoDataGroups = append(out.NoDataGroups, g)
				noData = append(noData, string(g))
			}
		}
		if !d.AnyYears[year] {
			out.Notes = append(out.Notes, fmt.Sprintf("no recorded shipments and no national entries for %d", year))
		}
		out.Notes = append(out.Notes, "feedstock, QPS and destruction are deducted from the shipments by their declared purpose; national entries of those kinds add only what never passed customs (domestic production used as feedstock, stocks destroyed), or, unmarked, a whole year's use for a year without shipments declared for it")
		if len(noData) > 0 {
			out.Notes = append(out.Notes, "no data (not zero) for "+strings.Join(noData, ", ")+": a group without a recorded shipment or a national entry in the year has no data; enter 0 t to state a true zero")
		}
		if !used.IsZero() {
			out.Notes = append(out.Notes, fmt.Sprintf("%s t of used, recycled or reclaimed imports and exports are reported but not counted (Decision IV/24, if reported under Article 7); they do count in an Article 5 Party's base-year consumption", controls.FormatExact(used)))
		}
		if len(cons.Uncontrolled) > 0 {
			out.Notes = append(out.Notes, "uncontrolled components left out: "+strings.Join(cons.Uncontrolled, ", "))
		}
		if keep(substances.GroupFII) {
			hs, err := r.HFC23Entries(ctx, year)
			if err != nil {
				return err
			}
			out.HFC23 = hs
			out.HFC23GWP = HFC23GWP(cat)
			if len(hs) > 0 {
				out.Notes = append(out.Notes, "HFC-23 by-product per facility is reported beside Annex F consumption and is not part of it (Art. 2J paras 6-7; Art. 3 para 1(d); Art. 7 para 3 ter)")
			}
		}
		out.Notes = append(out.Notes, d.Notes...)
		return nil
	})
	return out, err
}

// HFC23GWP is the Protocol GWP of HFC-23 in cat (Annex F Group II), 0 when cat lacks it.
func HFC23GWP(cat *substances.Catalogue) exact.Decimal {
	if sub, ok := cat.Substance(controls.HFC23); ok {
		return controls.SubstanceOf(sub).GWP
	}
	return exact.Zero
}

// BaselineReport is a scope's baseline computed from the register, with what is missing
// and the baseline as officially set, if stored.
type BaselineReport struct {
	Baseline controls.Baseline
	Missing  []string // one text per missing base year, naming what to enter
	Notes    []string
	Official *controls.OfficialFigure
}

// GetBaseline computes the reporting Party's baseline of a scope.
func (c *Consumption) GetBaseline(ctx context.Context, annexGroup string) (BaselineReport, error) {
	scope, err := scopeOrInvalid("annex_group", annexGroup)
	if err != nil {
		return BaselineReport{}, err
	}
	cat, rb := c.catalogue(), c.rulebook
	var out BaselineReport
	err = c.reports.Snapshot(ctx, func(r ReportReader) error {
		p, party, err := scopeRules(ctx, r, scope)
		if err != nil {
			return err
		}
		if _, err := rb.BaselineRule(party, scope); errors.Is(err, controls.ErrNoRule) {
			return invalid(FieldViolation{"annex_group", fmt.Sprintf("%s has no baseline: its consumption limit is 0 from the start (%v)", scope,
				strings.TrimPrefix(err.Error(), controls.ErrNoRule.Error()+": "))})
		}
		years := uniqueYears(BaselineYears(rb, party, scope))
		d, err := load(ctx, r, cat, years)
		if err != nil {
			return arithmetic(err)
		}
		b, err := rb.Baseline(d.Records, party, scope)
		if err != nil {
			return arithmetic(err)
		}
		out = baselineReport(b, d.stored(), years)
		ov, err := overrides(ctx, r, p.Code, scope)
		if err != nil {
			return err
		}
		if ob := ov.Baseline; ob != nil {
			out.Official = ob
			out.Notes = append(out.Notes, fmt.Sprintf("a baseline as officially set is stored (%s %s, %s): compliance and quota planning use it instead of the computed one", controls.FormatTonnes(ob.Value), b.Unit, ob.Source))
		}
		return nil
	})
	return out, err
}

func baselineReport(b controls.Baseline, records []controls.Record, years []int) BaselineReport {
	out := BaselineReport{Baseline: b}
	for _, g := range b.Missing {
		out.Missing = append(out.Missing, controls.GapText(g, records, years))
	}
	out.Notes = append(out.Notes, b.Notes...)
	out.Notes = append(out.Notes, controls.CoverageNotes(records, b.Scope, YearRange(b.Rule.FromYear, b.Rule.ToYear))...)
	if h := b.HCFC; h != nil {
		for _, n := range h.Notes {
			if !slices.Contains(out.Notes, n) {
				out.Notes = append(out.Notes, n)
			}
		}
		out.Notes = append(out.Notes, controls.CoverageNotes(records, h.Scope, YearRange(h.Rule.FromYear, h.Rule.ToYear))...)
	}
	return out
}
