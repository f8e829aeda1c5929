package service

import (
	"context"
	"fmt"
	"github.com/halovet/halovet/exact"
	"regexp"
	"time"

	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
	"github.com/halovet/halovet/validate"
)

var countryCodeRE = regexp.MustCompile(`^[A-Z]{2}$`)

const dateLayout = "2006-01-02"

// maxAllocation bounds a quota line (in t, ODP t or CO2-eq t): the recorder counts
// quota in billionths in 64-bit integers, and no national licence comes near a billion.
const maxAllocation = 1e9

func validGroup(g string) bool {
	x, err := substances.ParseGroup(g)
	return err == nil && x.Controlled() && x.String() == g // the written form exactly, "C/I"
}

func (l *licensingServer) PutParty(ctx context.Context, req *halovetv1.PutPartyRequest) (*halovetv1.PutPartyResponse, error) {
	sp, vs := partyFromProto(req.GetParty(), "party")
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if err := l.srv.store.PutParty(ctx, sp); err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	l.srv.registerChanged(ctx, ledger.Change{Parties: true})
	return &halovetv1.PutPartyResponse{Party: partyToProto(sp)}, nil
}

// partyFromProto validates party settings (field names start with prefix) and converts them.
func partyFromProto(p *halovetv1.Party, prefix string) (store.Party, []fieldViolation) {
	var vs []fieldViolation
	if !countryCodeRE.MatchString(p.GetCountryCode()) {
		vs = append(vs, fieldViolation{prefix + ".country_code", "must be an ISO 3166-1 alpha-2 code in capitals, e.g. XA"})
	}
	pt, ok := specified(wireterms.PartyTypeFromWire, p.GetPartyType())
	if !ok {
		vs = append(vs, fieldViolation{prefix + ".party_type", "must be ARTICLE_5, NON_ARTICLE_5 or NON_PARTY"})
	}
	hg, _ := specified(wireterms.HFCGroupFromWire, p.GetHfcGroup())
	for g, d := range p.GetBoundFrom() {
		if !validGroup(g) {
			vs = append(vs, fieldViolation{prefix + ".bound_from", fmt.Sprintf("key %q is not an Annex group; use A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I, F/I or F/II", g)})
		}
		if _, err := time.Parse(dateLayout, d); err != nil {
			vs = append(vs, fieldViolation{prefix + ".bound_from", fmt.Sprintf("date %q for %s is not YYYY-MM-DD", d, g)})
		}
	}
	return store.Party{CountryCode: p.GetCountryCode(), Name: p.GetName(), PartyType: pt, HFCGroup: hg,
		ReportingParty: p.GetReportingParty(), BoundFrom: p.GetBoundFrom()}, vs
}

func partyToProto(p store.Party) *halovetv1.Party {
	return &halovetv1.Party{CountryCode: p.CountryCode, Name: p.Name, PartyType: wireterms.PartyTypeToWire(p.PartyType),
		HfcGroup: wireterms.HFCGroupToWire(p.HFCGroup), ReportingParty: p.ReportingParty, BoundFrom: p.BoundFrom}
}

func (l *licensingServer) GetParty(ctx context.Context, req *halovetv1.GetPartyRequest) (*halovetv1.GetPartyResponse, error) {
	p, err := l.srv.store.GetParty(ctx, req.GetCountryCode())
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	return &halovetv1.GetPartyResponse{Party: partyToProto(p)}, nil
}

func (l *licensingServer) ListParties(ctx context.Context, req *halovetv1.ListPartiesRequest) (*halovetv1.ListPartiesResponse, error) {
	pg, vs, err := l.srv.openPage(ctx, "parties", req)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	ps, err := l.srv.store.ListPartiesPage(ctx, pg)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	out := &halovetv1.ListPartiesResponse{}
	if ps, out.NextPageToken, err = closePage(ctx, l.srv, "parties", req, pg, ps); err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	for _, p := range ps {
		out.Parties = append(out.Parties, partyToProto(p))
	}
	return out, nil
}

func (l *licensingServer) RegisterCompany(ctx context.Context, req *halovetv1.RegisterCompanyRequest) (*halovetv1.RegisterCompanyResponse, error) {
	c := req.GetCompany()
	sc, vs := companyFromProto(c, "company")
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if err := l.srv.store.PutCompany(ctx, sc); err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	return &halovetv1.RegisterCompanyResponse{Company: c}, nil
}

// companyFromProto validates a company (field names start with prefix) and converts it.
func companyFromProto(c *halovetv1.Company, prefix string) (store.Company, []fieldViolation) {
	var vs []fieldViolation
	if c.GetCompanyId() == "" {
		vs = append(vs, fieldViolation{prefix + ".company_id", "must not be empty"})
	}
	if c.GetCountryCode() != "" && !countryCodeRE.MatchString(c.GetCountryCode()) {
		vs = append(vs, fieldViolation{prefix + ".country_code", "must be an ISO 3166-1 alpha-2 code in capitals"})
	}
	return store.Company{CompanyID: c.GetCompanyId(), Name: c.GetName(), CountryCode: c.GetCountryCode()}, vs
}

func (l *licensingServer) ListCompanies(ctx context.Context, req *halovetv1.ListCompaniesRequest) (*halovetv1.ListCompaniesResponse, error) {
	pg, vs, err := l.srv.openPage(ctx, "companies", req)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	only := ""
	if own, scoped := callCompany(ctx); scoped {
		only = own // a trader sees its own company only
	}
	cs, err := l.srv.store.ListCompaniesPage(ctx, only, pg)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	out := &halovetv1.ListCompaniesResponse{}
	if cs, out.NextPageToken, err = closePage(ctx, l.srv, "companies", req, pg, cs); err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	for _, c := range cs {
		out.Companies = append(out.Companies, &halovetv1.Company{CompanyId: c.CompanyID, Name: c.Name, CountryCode: c.CountryCode})
	}
	return out, nil
}

// licenceFromProto validates a licence message and converts it; field names in the
// violations start with prefix (e.g. "licence" or "licences[3]"). For a new licence,
// quota lines without a number are numbered in order.
func (l *licensingServer) licenceFromProto(p *halovetv1.Licence, issuing bool, prefix string) (store.Licence, []fieldViolation) {
	var vs []fieldViolation
	out := store.Licence{Number: p.GetLicenceNumber(), CompanyID: p.GetCompanyId(), Status: terms.LicenceActive}
	if out.Number == "" {
		vs = append(vs, fieldViolation{prefix + ".licence_number", "must not be empty"})
	}
	if out.CompanyID == "" {
		vs = append(vs, fieldViolation{prefix + ".company_id", "must not be empty"})
	}
	if len(p.GetDirections()) == 0 {
		vs = append(vs, fieldViolation{prefix + ".directions", "list at least one of IMPORT, EXPORT, RE_EXPORT, TRANSIT"})
	}
	for _, d := range p.GetDirections() {
		t, ok := specified(wireterms.DirectionFromWire, d)
		if !ok {
			vs = append(vs, fieldViolation{prefix + ".directions", "unspecified direction; use IMPORT, EXPORT, RE_EXPORT or TRANSIT"})
			continue
		}
		out.Directions = append(out.Directions, t)
	}
	var err error
	if out.ValidFrom, err = time.Parse(dateLayout, p.GetValidFrom()); err != nil {
		vs = append(vs, fieldViolation{prefix + ".valid_from", fmt.Sprintf("%q is not a date YYYY-MM-DD", p.GetValidFrom())})
	}
	if out.ValidTo, err = time.Parse(dateLayout, p.GetValidTo()); err != nil {
		vs = append(vs, fieldViolation{prefix + ".valid_to", fmt.Sprintf("%q is not a date YYYY-MM-DD", p.GetValidTo())})
	} else if out.ValidTo.Before(out.ValidFrom) {
		vs = append(vs, fieldViolation{prefix + ".valid_to", "is before valid_from"})
	}
	if p.GetStatus() != halovetv1.LicenceStatus_LICENCE_STATUS_UNSPECIFIED {
		st, ok := specified(wireterms.LicenceStatusFromWire, p.GetStatus())
		if !ok {
			vs = append(vs, fieldViolation{prefix + ".status", "must be DRAFT, ACTIVE, SUSPENDED or REVOKED"})
		}
		out.Status = st
	}
	if issuing && (out.Status == terms.LicenceRevoked || out.Status == terms.LicenceSuspended) {
		vs = append(vs, fieldViolation{prefix + ".status", "a new licence is ACTIVE or DRAFT"})
	}
	for _, sp := range p.GetSpecialPurposes() {
		t, ok := specified(wireterms.PurposeFromWire, sp)
		if !ok {
			vs = append(vs, fieldViolation{prefix + ".special_purposes", "unspecified purpose"})
			continue
		}
		out.SpecialPurposes = append(out.SpecialPurposes, t)
	}
	seen := map[int]bool{}
	for i, q := range p.GetQuotaLines() {
		f := fmt.Sprintf("%s.quota_lines[%d]", prefix, i)
		line, lvs := l.quotaLineFromProto(q, f)
		vs = append(vs, lvs...)
		if line.LineNumber == 0 {
			line.LineNumber = i + 1
		}
		if seen[line.LineNumber] {
			vs = append(vs, fieldViolation{f + ".line_number", fmt.Sprintf("line %d appears twice", line.LineNumber)})
		}
		seen[line.LineNumber] = true
		out.QuotaLines = append(out.QuotaLines, line)
	}
	return out, vs
}

// quotaLineFromProto validates one quota line (field names start with f).
func (l *licensingServer) quotaLineFromProto(q *halovetv1.QuotaLine, f string) (store.QuotaLine, []fieldViolation) {
	var vs []fieldViolation
	line := store.QuotaLine{LineNumber: int(q.GetLineNumber()), AnnexGroup: q.GetAnnexGroup()}
	line.Allocated = quotaAmountIn(f+".allocated_amount", q.GetAllocatedAmount(), &vs)
	if q.GetLineNumber() < 0 {
		vs = append(vs, fieldViolation{f + ".line_number", "must be 1 or more (0: numbered in order)"})
	}
	switch {
	case q.GetAnnexGroup() != "" && q.GetSubstance() != "":
		vs = append(vs, fieldViolation{f, "give annex_group or substance, not both"})
	case q.GetAnnexGroup() == validate.WholeAnnexF:
		if q.GetUnit() != halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES {
			vs = append(vs, fieldViolation{f + ".unit", "a line for Annex F as a whole counts CO2-eq tonnes (Article 2J); use CO2E_TONNES, or a line per group"})
		}
	case q.GetAnnexGroup() != "":
		if !validGroup(q.GetAnnexGroup()) {
			vs = append(vs, fieldViolation{f + ".annex_group", fmt.Sprintf("%q is not an Annex group (A/I ... F/II) nor F (Annex F as a whole)", q.GetAnnexGroup())})
		}
	case q.GetSubstance() != "":
		s, ok := l.srv.cat.Load().Substance(q.GetSubstance())
		if !ok {
			vs = append(vs, fieldViolation{f + ".substance", fmt.Sprintf("%q is not a catalogue substance", q.GetSubstance())})
		} else {
			line.Substance = s.Designation
		}
	default:
		vs = append(vs, fieldViolation{f, "give annex_group (e.g. C/I) or substance (e.g. HCFC-22)"})
	}
	u, ok := specified(wireterms.QuotaUnitFromWire, q.GetUnit())
	if !ok {
		vs = append(vs, fieldViolation{f + ".unit", "must be METRIC_TONNES, ODP_TONNES or CO2E_TONNES"})
	}
	line.Unit = u
	for j, qp := range q.GetPurposes() {
		t, ok := specified(wireterms.PurposeFromWire, qp)
		if !ok {
			vs = append(vs, fieldViolation{fmt.Sprintf("%s.purposes[%d]", f, j), "unspecified purpose; name the use the line is an allowance for (e.g. PURPOSE_CRITICAL_USE)"})
			continue
		}
		line.Purposes = append(line.Purposes, t)
	}
	return line, vs
}

// quotaAmountIn reads a request's quota amount named field: a decimal string, "" for 0,
// not negative, at most maxAllocation and with at most 9 decimals (the register counts
// quota in billionths and rounds nothing it is given).
func quotaAmountIn(field, s string, vs *[]fieldViolation) exact.Decimal {
	d, _, err := exact.ParseField(field, s)
	switch {
	case err != nil:
		*vs = append(*vs, fieldViolation{field, fmt.Sprintf("%q is not a decimal; give the figure as a decimal string in plain notation, e.g. \"12.5\" or \"0\" (no exponent, no separators)", s)})
		return exact.Zero
	case d.Sign() < 0:
		*vs = append(*vs, fieldViolation{field, fmt.Sprintf("%s is negative; give 0 or more", d)})
		return exact.Zero
	case d.Cmp(exact.FromInt(maxAllocation)) > 0:
		*vs = append(*vs, fieldViolation{field, fmt.Sprintf("%s is above the largest quota amount; give 0 to %d in the line's unit", d, int64(maxAllocation))})
		return exact.Zero
	case !d.Round(9).Equal(d):
		*vs = append(*vs, fieldViolation{field, fmt.Sprintf("%s has more than 9 decimals; the register counts quota in billionths: give at most 9 decimals", d)})
		return exact.Zero
	}
	return d
}

// licenceToProto converts a stored licence; status is its status on day today.
func licenceToProto(l store.Licence, today time.Time) *halovetv1.Licence {
	p := &halovetv1.Licence{LicenceNumber: l.Number, CompanyId: l.CompanyID, ValidFrom: l.ValidFrom.Format(dateLayout),
		ValidTo: l.ValidTo.Format(dateLayout), Status: wireterms.LicenceStatusToWire(l.StatusOn(today)), Version: int32(l.Version)}
	for _, h := range l.StatusHistory {
		p.StatusHistory = append(p.StatusHistory, &halovetv1.LicenceStatusPeriod{FromDate: h.From.Format(dateLayout), Status: wireterms.LicenceStatusToWire(h.Status)})
		if !h.From.After(today) {
			p.StatusEffectiveDate = h.From.Format(dateLayout)
		}
	}
	for _, d := range l.Directions {
		p.Directions = append(p.Directions, wireterms.DirectionToWire(d))
	}
	for _, s := range l.SpecialPurposes {
		p.SpecialPurposes = append(p.SpecialPurposes, wireterms.PurposeToWire(s))
	}
	for _, q := range l.QuotaLines {
		p.QuotaLines = append(p.QuotaLines, &halovetv1.QuotaLine{LineNumber: int32(q.LineNumber), AnnexGroup: q.AnnexGroup,
			Substance: q.Substance, Unit: wireterms.QuotaUnitToWire(q.Unit), AllocatedAmount: q.Allocated.String(),
			DrawnAmount: q.Drawn.String(), RemainingAmount: q.Allocated.Sub(q.Drawn).String(),
			Purposes: purposesToProto(q.Purposes), ClosedOn: dateOrEmpty(q.ClosedOn)})
	}
	return p
}

func dateOrEmpty(t time.Time) string {
	if t.IsZero() {
		return ""
	}
	return t.Format(dateLayout)
}

func (l *licensingServer) IssueLicence(ctx context.Context, req *halovetv1.IssueLicenceRequest) (*halovetv1.IssueLicenceResponse, error) {
	lic, vs := l.licenceFromProto(req.GetLicence(), true, "licence")
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if err := l.srv.store.IssueLicence(ctx, lic, req.GetReason()); err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	l.srv.registerChanged(ctx, ledger.Change{Licences: []string{lic.Number}})
	got, err := l.srv.store.GetLicence(ctx, lic.Number)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	return &halovetv1.IssueLicenceResponse{Licence: licenceToProto(got, l.srv.today())}, nil
}

func (l *licensingServer) GetLicence(ctx context.Context, req *halovetv1.GetLicenceRequest) (*halovetv1.GetLicenceResponse, error) {
	got, err := l.srv.store.GetLicence(ctx, req.GetLicenceNumber())
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	if own, scoped := callCompany(ctx); scoped && got.CompanyID != own {
		return nil, outOfScope("licence_number", got.CompanyID, own)
	}
	return &halovetv1.GetLicenceResponse{Licence: licenceToProto(got, l.srv.today())}, nil
}

func (l *licensingServer) ListLicences(ctx context.Context, req *halovetv1.ListLicencesRequest) (*halovetv1.ListLicencesResponse, error) {
	company := req.GetCompanyId()
	if own, scoped := callCompany(ctx); scoped {
		if company != "" && company != own {
			return nil, outOfScope("company_id", company, own)
		}
		company = own // a trader's list is its own company's
	}
	pg, vs, err := l.srv.openPage(ctx, "licences", req)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	ls, err := l.srv.store.ListLicencesPage(ctx, company, int(req.GetYear()), pg)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	out := &halovetv1.ListLicencesResponse{}
	if ls, out.NextPageToken, err = closePage(ctx, l.srv, "licences", req, pg, ls); err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	today := l.srv.today()
	for _, x := range ls {
		out.Licences = append(out.Licences, licenceToProto(x, today))
	}
	return out, nil
}

func purposesToProto(ps []terms.Purpose) []halovetv1.Purpose {
	var out []halovetv1.Purpose
	for _, p := range ps {
		out = append(out, wireterms.PurposeToWire(p))
	}
	return out
}
