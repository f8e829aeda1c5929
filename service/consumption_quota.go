package service

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/terms"
)

// Quota planning: next year's allowed level, split among the companies in proportion to
// their recorded imports over reference years, by the largest-remainder method
// (controls.PlanQuotas), and on request issued as draft licences.

const (
	defaultQuotaGranularity = 0.001
	maxReferenceYears       = 20
)

// quotaUnitOf is the quota-line unit a scope is measured in.
func quotaUnitOf(scope controls.Scope) terms.QuotaUnit {
	if scope.Unit() == controls.UnitCO2eTonnes {
		return terms.QuotaCO2eTonnes
	}
	return terms.QuotaODPTonnes
}

// draftLicenceNumber names a draft licence: the scope without its slash, the year and the
// company, e.g. "CI-DRAFT-2027-XA-1001".
func draftLicenceNumber(scope controls.Scope, year int, company string) string {
	return fmt.Sprintf("%s-DRAFT-%d-%s", strings.ReplaceAll(string(scope), "/", ""), year, company)
}

func (c *consumptionServer) PlanQuotas(ctx context.Context, req *halovetv1.PlanQuotasRequest) (*halovetv1.PlanQuotasResponse, error) {
	scope, err := parseScopeField("annex_group", req.GetAnnexGroup())
	if err != nil {
		return nil, err
	}
	var vs []fieldViolation
	if v := checkQueryYear("year", req.GetYear()); v != nil {
		vs = append(vs, *v)
	}
	refs := req.GetReferenceYears()
	if len(refs) == 0 {
		vs = append(vs, fieldViolation{"reference_years", "is empty; give the years whose recorded imports set each company's share, e.g. 2024 and 2025"})
	}
	if len(refs) > maxReferenceYears {
		vs = append(vs, fieldViolation{"reference_years", fmt.Sprintf("holds %d years; at most %d", len(refs), maxReferenceYears)})
	}
	var years []int
	for i, y := range refs {
		if v := checkQueryYear(fmt.Sprintf("reference_years[%d]", i), y); v != nil {
			vs = append(vs, *v)
			continue
		}
		if slices.Contains(years, int(y)) {
			vs = append(vs, fieldViolation{fmt.Sprintf("reference_years[%d]", i), fmt.Sprintf("%d appears twice; each year once", y)})
			continue
		}
		years = append(years, int(y))
	}
	fraction := req.GetFraction()
	if fraction == 0 {
		fraction = 1
	}
	if math.IsNaN(fraction) || fraction <= 0 || fraction > 1 {
		vs = append(vs, fieldViolation{"fraction", fmt.Sprintf("is %v; accepted: a number above 0 and at most 1 (0 means 1)", req.GetFraction())})
	}
	gran := req.GetGranularity()
	if gran == 0 {
		gran = defaultQuotaGranularity
	}
	if math.IsNaN(gran) || math.IsInf(gran, 0) || gran <= 0 {
		vs = append(vs, fieldViolation{"granularity", fmt.Sprintf("is %v; accepted: an amount above 0, e.g. 0.001 (0 means 0.001)", req.GetGranularity())})
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if req.GetIssueDrafts() {
		if err := requireRole(ctx, "issuing the drafts (issue_drafts)", access.RoleOfficer); err != nil {
			return nil, err
		}
	}
	year := int(req.GetYear())
	party, rb, err := c.scopeRules(ctx, scope)
	if err != nil {
		return nil, err
	}
	d, err := c.srv.loadConsumption(ctx, uniqueYears(baselineYears(rb, party, scope)))
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
	lv, err := rb.AllowedLevel(d.records, party, scope, year)
	lv, err = officialLevel(rb, party, scope, year, lv, err, ov)
	if errors.Is(err, controls.ErrNoRule) || errors.Is(err, controls.ErrIncompleteBaseline) {
		return nil, status.Errorf(codes.FailedPrecondition, "no allowed level for %s in %d to plan from: %v", scope, year, err)
	}
	if err != nil {
		return nil, arithmeticError(ctx, c.srv, err)
	}

	unit := quotaUnitOf(scope)
	amounts, err := c.srv.store.CompanyImports(ctx, groupStrings(scope), unit, years)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	byCompany := map[string]map[int]float64{}
	var ids []string
	for _, a := range amounts {
		if byCompany[a.CompanyID] == nil {
			byCompany[a.CompanyID] = map[int]float64{}
			ids = append(ids, a.CompanyID)
		}
		// A negative sum cannot come from recorded imports; guard the arithmetic anyway.
		byCompany[a.CompanyID][a.Year] = math.Max(0, a.Amount)
	}
	out := &halovetv1.PlanQuotasResponse{Unit: string(lv.Unit), Allowed: lv.Value, Year: int32(year),
		AnnexGroup: string(scope), AllowedPercent: lv.Percent}
	out.Notes = append(out.Notes, lv.Notes...)
	if lv.Allowance.Servicing != nil {
		out.Notes = append(out.Notes, "the allowed level is a servicing-only cap: licences drawn on it are for servicing existing equipment")
	}
	if lv.Allowance.Average != nil {
		out.Notes = append(out.Notes, "period-average year: the allowed level is the period's mean; check the room left with AssessCompliance before issuing")
	}
	if len(ids) == 0 {
		return nil, status.Errorf(codes.FailedPrecondition,
			"no company has recorded imports of %s counting in consumption in %v, so there is no share to distribute by; choose other reference years, or set quotas by hand",
			scope, years)
	}
	var comps []controls.CompanyReference
	for _, id := range ids {
		comps = append(comps, controls.CompanyReference{CompanyID: id, Amounts: byCompany[id]})
	}
	plan, err := controls.PlanQuotas(controls.QuotaRequest{Total: lv.Value, Fraction: fraction, Granularity: gran,
		ReferenceYears: years, Companies: comps})
	if errors.Is(err, controls.ErrNoReference) {
		return nil, status.Error(codes.FailedPrecondition, err.Error())
	}
	var fe *controls.FieldError
	if errors.As(err, &fe) {
		return nil, invalid(fieldViolation{fe.Field, fe.Problem + "; accepted: " + fe.Accepted})
	}
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	out.Distributable = plan.Distributable
	out.Distributed = plan.Distributed
	for _, q := range plan.Quotas {
		out.Proposals = append(out.Proposals, &halovetv1.QuotaProposal{CompanyId: q.CompanyID, ReferenceShare: q.ReferenceShare,
			Quota: q.Amount, ReferenceAmount: q.Reference, ExactShare: q.ExactShare})
	}
	if !req.GetIssueDrafts() {
		return out, nil
	}
	if scope == controls.ScopeF {
		out.Notes = append(out.Notes, "draft licences carry one Annex F Group I line in CO2-eq t; add a Group II (HFC-23) line by amendment where a company imports HFC-23")
	}
	for _, prop := range out.Proposals {
		if prop.GetQuota() <= 0 {
			continue // nothing to licence
		}
		n, err := c.issueDraft(ctx, scope, year, unit, prop)
		if err != nil {
			return nil, err
		}
		prop.DraftLicenceNumber = n
	}
	return out, nil
}

func groupStrings(scope controls.Scope) []string {
	var gs []string
	for _, g := range scope.Groups() {
		gs = append(gs, string(g))
	}
	return gs
}

// issueDraft stores a proposal as a draft import licence. A draft of the same number
// from an earlier plan is amended to the new quota (insert first, amend on conflict, so
// two planners never both insert); a licence of that number that is no longer a draft is
// left alone and reported.
func (c *consumptionServer) issueDraft(ctx context.Context, scope controls.Scope, year int, unit terms.QuotaUnit, prop *halovetv1.QuotaProposal) (string, error) {
	group := string(scope)
	if scope == controls.ScopeF {
		group = "F/I"
	}
	num := draftLicenceNumber(scope, year, prop.GetCompanyId())
	lic := store.Licence{Number: num, CompanyID: prop.GetCompanyId(), Directions: []terms.Direction{terms.DirectionImport},
		ValidFrom: time.Date(year, 1, 1, 0, 0, 0, 0, time.UTC), ValidTo: time.Date(year, 12, 31, 0, 0, 0, 0, time.UTC),
		Status:     terms.LicenceDraft,
		QuotaLines: []store.QuotaLine{{LineNumber: 1, AnnexGroup: group, Unit: unit, Allocated: prop.GetQuota()}}}
	reason := fmt.Sprintf("quota plan %s %d", scope, year)
	err := c.srv.store.IssueLicence(ctx, lic, reason)
	if errors.Is(err, store.ErrAlreadyExists) {
		var cur store.Licence
		cur, err = c.srv.store.GetLicence(ctx, num)
		if err == nil && cur.Status != terms.LicenceDraft {
			return "", status.Errorf(codes.FailedPrecondition, "licence %s exists and is %s, not a draft; it was left as it is and no further drafts were issued", num, cur.Status)
		}
		if err == nil {
			_, err = c.srv.store.AmendLicence(ctx, store.Amendment{Licence: lic, EffectiveOn: c.srv.today(), Reason: reason + " (re-planned)"})
		}
	}
	if errors.Is(err, store.ErrNotFound) {
		return "", status.Errorf(codes.FailedPrecondition, "company %s is not registered, so no licence can be issued to it: register it (RegisterCompany) and plan again", prop.GetCompanyId())
	}
	if err != nil {
		return "", toStatus(ctx, c.srv.log, err)
	}
	c.srv.registerChanged(ctx, ledger.Change{Licences: []string{num}})
	return num, nil
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
		lv = controls.Level{Year: year, Scope: scope, Unit: scope.Unit(), Percent: al.Percent(), Allowance: al}
		err = nil
	}
	if err != nil {
		return lv, err
	}
	unit := string(lv.Unit)
	if ov.Baseline != nil && lv.Percent > 0 {
		lv.Value = ov.Baseline.Value * lv.Percent / 100
		lv.Notes = append(lv.Notes, fmt.Sprintf("baseline as officially set: %s %s (%s); the level is %s %% of it",
			fmtT(ov.Baseline.Value), unit, ov.Baseline.Source, fmtT(lv.Percent)))
	}
	if lim, ok := ov.Limits[year]; ok {
		lv.Notes = append(lv.Notes, fmt.Sprintf("limit as officially set: %s %s (%s), in place of the schedule's %s %s",
			fmtT(lim.Value), unit, lim.Source, fmtT(lv.Value), unit))
		lv.Value = lim.Value
	}
	if len(ov.Exemptions[year]) > 0 {
		lv.Notes = append(lv.Notes, "the year's authorised exemptions are not distributed here: license them on quota lines limited to their use")
	}
	return lv, nil
}
