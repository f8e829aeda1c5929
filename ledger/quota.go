package ledger

import (
	"context"
	"errors"
	"fmt"
	"github.com/halovet/halovet/terms"
	"slices"
	"strings"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/exact"
)

// Quota planning: next year's allowed level, split among the companies in proportion to
// their recorded imports over reference years, by the largest-remainder method
// (controls.PlanQuotas), and on request issued as draft licences, all in one transaction.

const (
	maxReferenceYears = 20
)

// DefaultQuotaGranularity is the quota unit a plan rounds to when none is given: 0.001.
var DefaultQuotaGranularity = exact.Scaled(1, -3)

// QuotaPlanRequest asks for a plan.
type QuotaPlanRequest struct {
	AnnexGroup     string // Annex group or "F"
	Year           int
	ReferenceYears []int
	Fraction       exact.Decimal // share of the allowed level to distribute; 0 means 1
	Granularity    exact.Decimal // 0 means DefaultQuotaGranularity
	IssueDrafts    bool
	// MayIssue, when set, is asked before anything is read whether the caller may issue
	// the drafts (a well-formed request with IssueDrafts only); its error is returned.
	MayIssue func() error
}

// QuotaProposal is one company's quota, with the draft licence issued for it.
type QuotaProposal struct {
	controls.Quota
	DraftLicenceNumber string // "" when no draft was issued
}

// QuotaPlan is a planned split of a year's allowed level.
type QuotaPlan struct {
	Scope     controls.Scope
	Year      int
	Level     controls.Level
	Plan      controls.QuotaPlan
	Proposals []QuotaProposal
	Notes     []string
	// Issued lists the draft licences stored, in proposal order.
	Issued []string
}

// QuotaUnitOf is the quota-line unit a scope is measured in.
func QuotaUnitOf(scope controls.Scope) terms.QuotaUnit {
	if scope.Unit() == controls.UnitCO2eTonnes {
		return terms.QuotaCO2eTonnes
	}
	return terms.QuotaODPTonnes
}

// DraftLicenceNumber names a draft licence: the scope without its slash, the year and the
// company, e.g. "CI-DRAFT-2027-XA-1001".
func DraftLicenceNumber(scope controls.Scope, year int, company string) string {
	return fmt.Sprintf("%s-DRAFT-%d-%s", strings.ReplaceAll(string(scope), "/", ""), year, company)
}

// validate checks a request and returns its scope, reference years, fraction and
// granularity with defaults applied.
func (q QuotaPlanRequest) validate() (controls.Scope, []int, exact.Decimal, exact.Decimal, error) {
	scope, fv := ParseScope("annex_group", q.AnnexGroup)
	if fv != nil {
		return "", nil, exact.Zero, exact.Zero, invalid(*fv)
	}
	var vs []FieldViolation
	if v := CheckQueryYear("year", q.Year); v != nil {
		vs = append(vs, *v)
	}
	refs := q.ReferenceYears
	if len(refs) == 0 {
		vs = append(vs, FieldViolation{"reference_years", "is empty; give the years whose recorded imports set each company's share, e.g. 2024 and 2025"})
	}
	if len(refs) > maxReferenceYears {
		vs = append(vs, FieldViolation{"reference_years", fmt.Sprintf("holds %d years; at most %d", len(refs), maxReferenceYears)})
	}
	var years []int
	for i, y := range refs {
		f := fmt.Sprintf("reference_years[%d]", i)
		if v := CheckQueryYear(f, y); v != nil {
			vs = append(vs, *v)
			continue
		}
		if slices.Contains(years, y) {
			vs = append(vs, FieldViolation{f, fmt.Sprintf("%d appears twice; each year once", y)})
			continue
		}
		years = append(years, y)
	}
	fraction := q.Fraction
	if fraction.IsZero() {
		fraction = exact.FromInt(1)
	}
	if fraction.Sign() <= 0 || fraction.Cmp(exact.FromInt(1)) > 0 {
		vs = append(vs, FieldViolation{"fraction_ratio", fmt.Sprintf("is %v; accepted: a decimal above 0 and at most 1 (absent means 1)", q.Fraction)})
	}
	gran := q.Granularity
	if gran.IsZero() {
		gran = DefaultQuotaGranularity
	}
	if gran.Sign() <= 0 {
		vs = append(vs, FieldViolation{"granularity_amount", fmt.Sprintf("is %v; accepted: a decimal amount above 0, e.g. 0.001 (absent means 0.001)", q.Granularity)})
	}
	return scope, years, fraction, gran, invalid(vs...)
}

// PlanQuotas plans a year's quotas and, when asked, issues every proposal above 0 as a
// draft import licence in one transaction: a licence of a draft's number that is no longer
// a draft refuses the whole plan and nothing is stored.
func (c *Consumption) PlanQuotas(ctx context.Context, q QuotaPlanRequest) (QuotaPlan, error) {
	scope, years, fraction, gran, err := q.validate()
	if err != nil {
		return QuotaPlan{}, err
	}
	if q.IssueDrafts && q.MayIssue != nil {
		if err := q.MayIssue(); err != nil {
			return QuotaPlan{}, err
		}
	}
	out, err := c.plan(ctx, scope, q.Year, years, fraction, gran)
	if err != nil || !q.IssueDrafts {
		return out, err
	}
	if scope == controls.ScopeF {
		out.Notes = append(out.Notes, "draft licences carry one Annex F Group I line in CO2-eq t; add a Group II (HFC-23) line by amendment where a company imports HFC-23")
	}
	if err := c.issueDrafts(ctx, &out); err != nil {
		return QuotaPlan{}, err
	}
	return out, nil
}

// plan reads the register in one snapshot and splits the year's allowed level.
func (c *Consumption) plan(ctx context.Context, scope controls.Scope, year int, years []int, fraction, gran exact.Decimal) (QuotaPlan, error) {
	cat, rb := c.catalogue(), c.rulebook
	out := QuotaPlan{Scope: scope, Year: year}
	err := c.reports.Snapshot(ctx, func(r ReportReader) error {
		p, party, err := scopeRules(ctx, r, scope)
		if err != nil {
			return err
		}
		d, err := load(ctx, r, cat, uniqueYears(BaselineYears(rb, party, scope)))
		if err != nil {
			return arithmetic(err)
		}
		ov, err := overrides(ctx, r, p.Code, scope)
		if err != nil {
			return err
		}
		lv, err := rb.AllowedLevel(d.Records, party, scope, year)
		lv, err = officialLevel(rb, party, scope, year, lv, err, ov)
		if errors.Is(err, controls.ErrNoRule) || errors.Is(err, controls.ErrIncompleteBaseline) {
			return refused(fmt.Sprintf("no allowed level for %s in %d to plan from: %v", scope, year, err))
		}
		if err != nil {
			return arithmetic(err)
		}
		out.Level = lv
		out.Notes = append(out.Notes, lv.Notes...)
		if lv.Allowance.Servicing != nil {
			out.Notes = append(out.Notes, "the allowed level is a servicing-only cap: licences drawn on it are for servicing existing equipment")
		}
		if lv.Allowance.Average != nil {
			out.Notes = append(out.Notes, "period-average year: the allowed level is the period's mean; check the room left with AssessCompliance before issuing")
		}
		var groups []string
		for _, g := range scope.Groups() {
			groups = append(groups, string(g))
		}
		amounts, err := r.CompanyImports(ctx, groups, QuotaUnitOf(scope), years)
		if err != nil {
			return err
		}
		byCompany := map[string]map[int]exact.Decimal{}
		var comps []controls.CompanyReference
		for _, a := range amounts {
			if byCompany[a.CompanyID] == nil {
				byCompany[a.CompanyID] = map[int]exact.Decimal{}
				comps = append(comps, controls.CompanyReference{CompanyID: a.CompanyID, Amounts: byCompany[a.CompanyID]})
			}
			// A negative sum cannot come from recorded imports; guard the arithmetic anyway.
			byCompany[a.CompanyID][a.Year] = exact.Max(exact.Zero, a.Amount)
		}
		if len(comps) == 0 {
			return refused(fmt.Sprintf(
				"no company has recorded imports of %s counting in consumption in %v, so there is no share to distribute by; choose other reference years, or set quotas by hand",
				scope, years))
		}
		plan, err := controls.PlanQuotas(controls.QuotaRequest{Total: lv.Value, Fraction: fraction, Granularity: gran,
			ReferenceYears: years, Companies: comps})
		var fe *controls.FieldError
		switch {
		case errors.Is(err, controls.ErrNoReference):
			return refused(err.Error())
		case errors.As(err, &fe):
			return invalid(FieldViolation{fe.Field, fe.Problem + "; accepted: " + fe.Accepted})
		case err != nil:
			return err
		}
		out.Plan = plan
		for _, qu := range plan.Quotas {
			out.Proposals = append(out.Proposals, QuotaProposal{Quota: qu})
		}
		return nil
	})
	return out, err
}

// issueDrafts stores every proposal above 0 as a draft in one transaction.
func (c *Consumption) issueDrafts(ctx context.Context, plan *QuotaPlan) error {
	if c.drafts == nil {
		return errors.New("ledger: no DraftIssuer configured")
	}
	group := string(plan.Scope)
	if plan.Scope == controls.ScopeF {
		group = "F/I"
	}
	var drafts []DraftLicence
	var at []int
	for i, p := range plan.Proposals {
		if p.Amount.Sign() <= 0 {
			continue // nothing to licence
		}
		drafts = append(drafts, DraftLicence{Number: DraftLicenceNumber(plan.Scope, plan.Year, p.CompanyID), CompanyID: p.CompanyID,
			Year: plan.Year, AnnexGroup: group, Unit: QuotaUnitOf(plan.Scope), Quota: p.Amount})
		at = append(at, i)
	}
	if len(drafts) == 0 {
		return nil
	}
	err := c.drafts.IssueDrafts(ctx, drafts, fmt.Sprintf("quota plan %s %d", plan.Scope, plan.Year))
	var nd *NotDraftError
	var uc *UnknownCompanyError
	switch {
	case errors.As(err, &nd):
		return refused(fmt.Sprintf("licence %s exists and is %s, not a draft; it was left as it is and no draft of the plan was issued", nd.Number, nd.Status))
	case errors.As(err, &uc):
		return refused(fmt.Sprintf("company %s is not registered, so no licence can be issued to it: register it (RegisterCompany) and plan again; no draft of the plan was issued", uc.CompanyID))
	case err != nil:
		return err
	}
	for k, i := range at {
		plan.Proposals[i].DraftLicenceNumber = drafts[k].Number
		plan.Issued = append(plan.Issued, drafts[k].Number)
	}
	return nil
}

// officialLevel applies the figures as officially set to a planned level: an official
// baseline replaces the computed one (also when the computed one lacks data), an official
// limit of the year replaces the level. Authorised exemptions are not distributed: they are
// licensed on quota lines for their use.
func officialLevel(rb *controls.Rulebook, party controls.Party, scope controls.Scope, year int, lv controls.Level, err error, ov controls.Overrides) (controls.Level, error) {
	if errors.Is(err, controls.ErrIncompleteBaseline) && ov.Baseline != nil {
		al, aerr := rb.Allowance(party, scope, year)
		if aerr != nil {
			return lv, aerr
		}
		lv = controls.Level{Year: year, Scope: scope, Unit: scope.Unit(), Percent: exact.OfFloat(al.Percent()), Allowance: al}
		err = nil
	}
	if err != nil {
		return lv, err
	}
	unit := string(lv.Unit)
	if ov.Baseline != nil && lv.Percent.Sign() > 0 {
		lv.Value = ov.Baseline.Value.Percent(lv.Percent).Round(lv.Unit.Exact().Spec().DerivedPlaces)
		lv.Notes = append(lv.Notes, fmt.Sprintf("baseline as officially set: %s %s (%s); the level is %s %% of it",
			controls.FormatTonnes(ov.Baseline.Value), unit, ov.Baseline.Source, controls.FormatExact(lv.Percent)))
	}
	if lim, ok := ov.Limits[year]; ok {
		lv.Notes = append(lv.Notes, fmt.Sprintf("limit as officially set: %s %s (%s), in place of the schedule's %s %s",
			controls.FormatTonnes(lim.Value), unit, lim.Source, controls.FormatExact(lv.Value), unit))
		lv.Value = lim.Value
	}
	if len(ov.Exemptions[year]) > 0 {
		lv.Notes = append(lv.Notes, "the year's authorised exemptions are not distributed here: license them on quota lines limited to their use")
	}
	return lv, nil
}
