package service

import (
	"context"
	"fmt"
	"time"
	"unicode/utf8"

	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/terms"
	"github.com/halovet/halovet/validate"
)

// Licence history, the reporting Party and registry loads: the calls that change the
// register with a date and a reason.

// maxReasonChars bounds a reason given for the audit log and the histories (common
// practice: a sentence or a short paragraph).
const maxReasonChars = 2000

// maxLoadObjects bounds the objects of one registry load (one transaction).
const maxLoadObjects = 10000

// today is the server's current day (UTC).
func (s *Server) today() time.Time {
	y, m, d := s.opts.Now().UTC().Date()
	return time.Date(y, m, d, 0, 0, 0, 0, time.UTC)
}

// effectiveDay reads an effective date field: empty is today; a date later than today is
// refused when future is false.
func (s *Server) effectiveDay(field, v string, future bool) (time.Time, []fieldViolation) {
	today := s.today()
	if v == "" {
		return today, nil
	}
	d, err := time.Parse(dateLayout, v)
	if err != nil {
		return today, []fieldViolation{{field, fmt.Sprintf("%q is not a date YYYY-MM-DD (empty: today)", v)}}
	}
	if d.Year() < 1987 || d.Year() > 2200 {
		return today, []fieldViolation{{field, fmt.Sprintf("%s is outside 1987-2200", v)}}
	}
	if !future && d.After(today) {
		return today, []fieldViolation{{field, fmt.Sprintf("%s is after today (%s): the change applies from when it is recorded; record it on that day", v, today.Format(dateLayout))}}
	}
	return d, nil
}

// reasonProblems checks a reason; required says it may not be empty.
func reasonProblems(field, r string, required bool) []fieldViolation {
	switch {
	case required && r == "":
		return []fieldViolation{{field, "must not be empty: say why, for the audit log"}}
	case utf8.RuneCountInString(r) > maxReasonChars:
		return []fieldViolation{{field, fmt.Sprintf("is longer than %d characters", maxReasonChars)}}
	}
	if p := validate.TextProblem(r); p != "" {
		return []fieldViolation{{field, p}}
	}
	return nil
}

// licenceAnswer reads a licence back after a change.
func (l *licensingServer) licenceAnswer(ctx context.Context, number string) (*halovetv1.Licence, error) {
	l.srv.registerChanged(ctx, ledger.Change{Licences: []string{number}})
	got, err := l.srv.store.GetLicence(ctx, number)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	return licenceToProto(got, l.srv.today()), nil
}

func (l *licensingServer) AmendLicence(ctx context.Context, req *halovetv1.AmendLicenceRequest) (*halovetv1.AmendLicenceResponse, error) {
	lic, vs := l.licenceFromProto(req.GetLicence(), false, "licence")
	eff, evs := l.srv.effectiveDay("effective_date", req.GetEffectiveDate(), false)
	vs = append(append(vs, evs...), reasonProblems("reason", req.GetReason(), false)...)
	if req.GetExpectedVersion() < 0 {
		vs = append(vs, fieldViolation{"expected_version", "must be 0 (no check) or the version read"})
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if _, err := l.srv.store.AmendLicence(ctx, store.Amendment{Licence: lic, EffectiveOn: eff, Reason: req.GetReason(),
		ExpectedVersion: int(req.GetExpectedVersion())}); err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	p, err := l.licenceAnswer(ctx, lic.Number)
	if err != nil {
		return nil, err
	}
	return &halovetv1.AmendLicenceResponse{Licence: p}, nil
}

var eventKindEnum = map[string]halovetv1.LicenceEventKind{
	"issued":         halovetv1.LicenceEventKind_LICENCE_EVENT_KIND_ISSUED,
	"activated":      halovetv1.LicenceEventKind_LICENCE_EVENT_KIND_ACTIVATED,
	"suspended":      halovetv1.LicenceEventKind_LICENCE_EVENT_KIND_SUSPENDED,
	"reinstated":     halovetv1.LicenceEventKind_LICENCE_EVENT_KIND_REINSTATED,
	"revoked":        halovetv1.LicenceEventKind_LICENCE_EVENT_KIND_REVOKED,
	"amended":        halovetv1.LicenceEventKind_LICENCE_EVENT_KIND_AMENDED,
	"line-closed":    halovetv1.LicenceEventKind_LICENCE_EVENT_KIND_LINE_CLOSED,
	"status-undated": halovetv1.LicenceEventKind_LICENCE_EVENT_KIND_STATUS_UNDATED,
}

func (l *licensingServer) SetLicenceStatus(ctx context.Context, req *halovetv1.SetLicenceStatusRequest) (*halovetv1.SetLicenceStatusResponse, error) {
	var vs []fieldViolation
	if req.GetLicenceNumber() == "" {
		vs = append(vs, fieldViolation{"licence_number", "must not be empty"})
	}
	st, ok := specified(wireterms.LicenceStatusFromWire, req.GetStatus())
	if !ok || st == terms.LicenceDraft {
		vs = append(vs, fieldViolation{"status", "must be SUSPENDED, ACTIVE (a reinstatement or a draft made valid) or REVOKED"})
	}
	eff, evs := l.srv.effectiveDay("effective_date", req.GetEffectiveDate(), true)
	vs = append(append(vs, evs...), reasonProblems("reason", req.GetReason(), true)...)
	if req.GetExpectedVersion() < 0 {
		vs = append(vs, fieldViolation{"expected_version", "must be 0 (no check) or the version read"})
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if req.GetEffectiveDate() == "" {
		eff = time.Time{} // today, or the licence's first day when that is later
	}
	kind, err := l.srv.store.SetLicenceStatus(ctx, store.StatusChange{Number: req.GetLicenceNumber(), Status: st, EffectiveOn: eff,
		Today: l.srv.today(), Reason: req.GetReason(), ExpectedVersion: int(req.GetExpectedVersion())})
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	p, err := l.licenceAnswer(ctx, req.GetLicenceNumber())
	if err != nil {
		return nil, err
	}
	return &halovetv1.SetLicenceStatusResponse{Licence: p, Change: eventKindEnum[kind]}, nil
}

func (l *licensingServer) CloseQuotaLine(ctx context.Context, req *halovetv1.CloseQuotaLineRequest) (*halovetv1.CloseQuotaLineResponse, error) {
	var vs []fieldViolation
	if req.GetLicenceNumber() == "" {
		vs = append(vs, fieldViolation{"licence_number", "must not be empty"})
	}
	if req.GetLineNumber() < 1 {
		vs = append(vs, fieldViolation{"line_number", "must be the number of a quota line (1 or more)"})
	}
	eff, evs := l.srv.effectiveDay("effective_date", req.GetEffectiveDate(), false)
	vs = append(append(vs, evs...), reasonProblems("reason", req.GetReason(), true)...)
	var succ *store.QuotaLine
	if req.GetSuccessor() != nil {
		q, qvs := l.quotaLineFromProto(req.GetSuccessor(), "successor")
		if req.GetSuccessor().GetLineNumber() != 0 {
			qvs = append(qvs, fieldViolation{"successor.line_number", "is assigned by the server; leave it 0"})
		}
		vs = append(vs, qvs...)
		succ = &q
	}
	if req.GetExpectedVersion() < 0 {
		vs = append(vs, fieldViolation{"expected_version", "must be 0 (no check) or the version read"})
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	n, err := l.srv.store.CloseQuotaLine(ctx, store.CloseLine{Number: req.GetLicenceNumber(), LineNumber: int(req.GetLineNumber()),
		EffectiveOn: eff, Reason: req.GetReason(), Successor: succ, ExpectedVersion: int(req.GetExpectedVersion())})
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	p, err := l.licenceAnswer(ctx, req.GetLicenceNumber())
	if err != nil {
		return nil, err
	}
	return &halovetv1.CloseQuotaLineResponse{Licence: p, SuccessorLineNumber: int32(n)}, nil
}

func (l *licensingServer) ListLicenceHistory(ctx context.Context, req *halovetv1.ListLicenceHistoryRequest) (*halovetv1.ListLicenceHistoryResponse, error) {
	pg, vs, err := l.srv.openPage(ctx, "licence-history", req)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	if req.GetLicenceNumber() == "" {
		vs = append([]fieldViolation{{"licence_number", "must not be empty"}}, vs...)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	lic, err := l.srv.store.GetLicence(ctx, req.GetLicenceNumber())
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	if own, scoped := callCompany(ctx); scoped && lic.CompanyID != own {
		return nil, outOfScope("licence_number", lic.CompanyID, own)
	}
	evs, err := l.srv.store.LicenceHistoryPage(ctx, req.GetLicenceNumber(), pg)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	out := &halovetv1.ListLicenceHistoryResponse{StatusHistory: licenceToProto(lic, l.srv.today()).GetStatusHistory()}
	if evs, out.NextPageToken, err = closePage(ctx, l.srv, "licence-history", req, pg, evs); err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	for _, e := range evs {
		out.Events = append(out.Events, &halovetv1.LicenceEvent{EventId: e.ID, Kind: eventKindEnum[e.Kind],
			EffectiveDate: e.EffectiveOn.Format(dateLayout), Status: wireterms.LicenceStatusToWire(e.Status), Reason: e.Reason,
			Actor: e.Actor, RecordedAt: e.RecordedAt.UTC().Format(time.RFC3339), DetailJson: string(e.Detail)})
	}
	return out, nil
}

func (l *licensingServer) SetReportingParty(ctx context.Context, req *halovetv1.SetReportingPartyRequest) (*halovetv1.SetReportingPartyResponse, error) {
	var vs []fieldViolation
	if !countryCodeRE.MatchString(req.GetCountryCode()) {
		vs = append(vs, fieldViolation{"country_code", "must be an ISO 3166-1 alpha-2 code in capitals, e.g. XA"})
	}
	vs = append(vs, reasonProblems("reason", req.GetReason(), req.GetForce())...)
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	changed, err := l.srv.store.SetReportingParty(ctx, store.ReportingPartyChange{CountryCode: req.GetCountryCode(),
		Force: req.GetForce(), Reason: req.GetReason()})
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	l.srv.registerChanged(ctx, ledger.Change{Parties: true})
	p, err := l.srv.store.GetParty(ctx, req.GetCountryCode())
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	return &halovetv1.SetReportingPartyResponse{Party: partyToProto(p), Changed: changed}, nil
}

var loadResultEnum = map[string]halovetv1.LoadResult{
	"created": halovetv1.LoadResult_LOAD_RESULT_CREATED, "changed": halovetv1.LoadResult_LOAD_RESULT_CHANGED,
	"unchanged": halovetv1.LoadResult_LOAD_RESULT_UNCHANGED,
}

func (l *licensingServer) LoadRegistry(ctx context.Context, req *halovetv1.LoadRegistryRequest) (*halovetv1.LoadRegistryResponse, error) {
	load, vs := l.loadFromProto(req)
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	out, err := l.srv.store.LoadRegistry(ctx, load)
	if err != nil {
		return nil, toStatus(ctx, l.srv.log, err)
	}
	resp := &halovetv1.LoadRegistryResponse{DryRun: req.GetDryRun()}
	var nums []string
	for _, o := range out {
		resp.Objects = append(resp.Objects, &halovetv1.LoadedObject{Kind: o.Kind, Key: o.Key, Index: int32(o.Index),
			Result: loadResultEnum[o.Result], Changes: o.Changes})
		if o.Kind == "licence" && o.Result != "unchanged" {
			nums = append(nums, o.Key)
		}
	}
	if !req.GetDryRun() {
		l.srv.registerChanged(ctx, ledger.Change{Parties: len(req.GetParties()) > 0, Licences: nums})
	}
	return resp, nil
}

// loadFromProto decodes a LoadRegistry request into the store's load, with a violation for
// each bad field (parties[i]…, companies[i]…, licences[i]…).
func (l *licensingServer) loadFromProto(req *halovetv1.LoadRegistryRequest) (store.Load, []fieldViolation) {
	vs := reasonProblems("reason", req.GetReason(), true)
	if n := len(req.GetParties()) + len(req.GetCompanies()) + len(req.GetLicences()); n > maxLoadObjects {
		vs = append(vs, fieldViolation{"licences", fmt.Sprintf("a load holds at most %d objects, not %d; split it", maxLoadObjects, n)})
	}
	load := store.Load{Today: l.srv.today(), Reason: req.GetReason(), DryRun: req.GetDryRun()}
	for i, p := range req.GetParties() {
		sp, pvs := partyFromProto(p, fmt.Sprintf("parties[%d]", i))
		vs = append(vs, pvs...)
		load.Parties = append(load.Parties, sp)
	}
	for i, c := range req.GetCompanies() {
		sc, cvs := companyFromProto(c, fmt.Sprintf("companies[%d]", i))
		vs = append(vs, cvs...)
		load.Companies = append(load.Companies, sc)
	}
	for i, p := range req.GetLicences() {
		f := fmt.Sprintf("licences[%d]", i)
		lic, lvs := l.licenceFromProto(p, false, f)
		if p.GetStatus() == halovetv1.LicenceStatus_LICENCE_STATUS_UNSPECIFIED {
			lic.Status = terms.LicenceStatusUnspecified
		}
		eff, evs := l.srv.effectiveDay(f+".status_effective_date", p.GetStatusEffectiveDate(), true)
		vs = append(append(vs, lvs...), evs...)
		if p.GetStatusEffectiveDate() == "" {
			eff = time.Time{} // today, or the licence's first day when that is later
		}
		load.Licences = append(load.Licences, store.LoadLicence{Licence: lic, StatusEffectiveOn: eff})
	}
	return load, vs
}
