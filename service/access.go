package service

import (
	"context"
	"errors"
	"fmt"
	"strings"

	"google.golang.org/protobuf/types/known/timestamppb"

	"github.com/halovet/halovet/access"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/store"
)

// accessServer answers AccessService: credentials and the audit trail.
type accessServer struct {
	halovetv1.UnimplementedAccessServiceServer
	srv *Server
}

func credentialToProto(c store.StoredCredential) *halovetv1.Credential {
	p := &halovetv1.Credential{CredentialId: c.ID, Name: c.Name, Role: wireterms.RoleToWire(c.Role), CompanyId: c.CompanyID,
		CreatedAt: timestamppb.New(c.CreatedAt), CreatedBy: c.CreatedBy, RevokedBy: c.RevokedBy}
	if !c.ExpiresAt.IsZero() {
		p.ExpiresAt = timestamppb.New(c.ExpiresAt)
	}
	if !c.RevokedAt.IsZero() {
		p.RevokedAt = timestamppb.New(c.RevokedAt)
	}
	return p
}

func (a *accessServer) IssueCredential(ctx context.Context, req *halovetv1.IssueCredentialRequest) (*halovetv1.IssueCredentialResponse, error) {
	var vs []fieldViolation
	name := strings.TrimSpace(req.GetName())
	if name == "" || len(name) > 200 {
		vs = append(vs, fieldViolation{"name", "must be 1 to 200 characters naming the person or system, e.g. officer.a.ndiaye"})
	}
	role, ok := wireterms.RoleFromWire(req.GetRole())
	if !ok || role == access.RoleAnonymous {
		vs = append(vs, fieldViolation{"role", fmt.Sprintf("%v names no role; give ROLE_OFFICER, ROLE_CUSTOMS, ROLE_TRADER, ROLE_AUDITOR or ROLE_READER", req.GetRole())})
	}
	switch {
	case role == access.RoleTrader && req.GetCompanyId() == "":
		vs = append(vs, fieldViolation{"company_id", "a trader's credential is bound to one company: give its company id"})
	case role != access.RoleTrader && role != "" && req.GetCompanyId() != "":
		vs = append(vs, fieldViolation{"company_id", "only a trader's credential is bound to a company; leave it empty for role " + string(role)})
	}
	nc := store.NewCredential{Name: name, Role: role, CompanyID: req.GetCompanyId()}
	if req.ExpiresAt != nil {
		if err := req.GetExpiresAt().CheckValid(); err != nil {
			vs = append(vs, fieldViolation{"expires_at", err.Error()})
		} else if nc.ExpiresAt = req.GetExpiresAt().AsTime(); !nc.ExpiresAt.After(a.srv.opts.Now()) {
			vs = append(vs, fieldViolation{"expires_at", "is not in the future"})
		}
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	c, secret, err := a.srv.store.IssueCredential(ctx, nc)
	if errors.Is(err, store.ErrNotFound) {
		return nil, invalid(fieldViolation{"company_id", fmt.Sprintf("company %q is not registered", nc.CompanyID)})
	}
	if err != nil {
		return nil, toStatus(ctx, a.srv.log, err)
	}
	return &halovetv1.IssueCredentialResponse{Credential: credentialToProto(c), Secret: secret}, nil
}

func (a *accessServer) ListCredentials(ctx context.Context, req *halovetv1.ListCredentialsRequest) (*halovetv1.ListCredentialsResponse, error) {
	pg, vs, err := a.srv.openPage(ctx, "credentials", req)
	if err != nil {
		return nil, toStatus(ctx, a.srv.log, err)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	cs, err := a.srv.store.ListCredentialsPage(ctx, req.GetIncludeRevoked(), pg)
	if err != nil {
		return nil, toStatus(ctx, a.srv.log, err)
	}
	out := &halovetv1.ListCredentialsResponse{}
	if cs, out.NextPageToken, err = closePage(ctx, a.srv, "credentials", req, pg, cs); err != nil {
		return nil, toStatus(ctx, a.srv.log, err)
	}
	for _, c := range cs {
		out.Credentials = append(out.Credentials, credentialToProto(c))
	}
	return out, nil
}

func (a *accessServer) RevokeCredential(ctx context.Context, req *halovetv1.RevokeCredentialRequest) (*halovetv1.RevokeCredentialResponse, error) {
	if err := access.ValidCredentialID(req.GetCredentialId()); err != nil {
		return nil, invalid(fieldViolation{"credential_id", err.Error() + " (as `halovet credentials list` shows)"})
	}
	c, err := a.srv.store.RevokeCredential(ctx, req.GetCredentialId(), req.GetReason())
	if err != nil {
		return nil, toStatus(ctx, a.srv.log, err)
	}
	a.srv.auth.Forget(c.ID)
	return &halovetv1.RevokeCredentialResponse{Credential: credentialToProto(c)}, nil
}

func (a *accessServer) ListAuditEvents(ctx context.Context, req *halovetv1.ListAuditEventsRequest) (*halovetv1.ListAuditEventsResponse, error) {
	f, vs := auditFilter(req)
	if t := req.GetPageToken(); t != "" {
		n, err := a.srv.openPageToken(ctx, "audit", filterHash(req), t)
		switch {
		case errors.Is(err, errPageToken):
			vs = append(vs, fieldViolation{"page_token", err.Error()})
		case err != nil:
			return nil, toStatus(ctx, a.srv.log, err)
		}
		f.AfterSeq = n
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	evs, next, err := a.srv.store.ListAuditEvents(ctx, f)
	if err != nil {
		return nil, toStatus(ctx, a.srv.log, err)
	}
	out := &halovetv1.ListAuditEventsResponse{}
	if next > 0 {
		if out.NextPageToken, err = a.srv.issuePageToken(ctx, "audit", filterHash(req), next); err != nil {
			return nil, toStatus(ctx, a.srv.log, err)
		}
	}
	for _, e := range evs {
		out.Events = append(out.Events, auditEventToProto(e))
	}
	return out, nil
}

// auditFilter decodes the filters of a ListAuditEvents request, with a violation for each
// bad field.
func auditFilter(req *halovetv1.ListAuditEventsRequest) (store.AuditFilter, []fieldViolation) {
	var vs []fieldViolation
	f := store.AuditFilter{Actor: req.GetActor(), Entity: req.GetObjectType(), EntityKey: req.GetObjectKey(), Limit: int(req.GetPageSize())}
	if req.GetPageSize() < 0 || req.GetPageSize() > 1000 {
		vs = append(vs, fieldViolation{"page_size", "accepted: 1 to 1000, or 0 for 100"})
	}
	if req.FromTime != nil {
		if err := req.GetFromTime().CheckValid(); err != nil {
			vs = append(vs, fieldViolation{"from_time", err.Error()})
		}
		f.From = req.GetFromTime().AsTime()
	}
	if req.ToTime != nil {
		if err := req.GetToTime().CheckValid(); err != nil {
			vs = append(vs, fieldViolation{"to_time", err.Error()})
		}
		f.To = req.GetToTime().AsTime()
	}
	if f.EntityKey != "" && f.Entity == "" {
		vs = append(vs, fieldViolation{"object_key", "needs object_type as well"})
	}
	return f, vs
}

func auditEventToProto(e store.AuditEvent) *halovetv1.AuditEvent {
	return &halovetv1.AuditEvent{Seq: e.Seq, At: timestamppb.New(e.At), Actor: e.Actor,
		CredentialId: e.CredentialID, RequestId: e.RequestID, Action: e.Action, ObjectType: e.Entity,
		ObjectKey: e.EntityKey, Reason: e.Reason, DetailJson: string(e.Detail), HashHex: fmt.Sprintf("%x", e.Hash)}
}

func (a *accessServer) VerifyAuditChain(ctx context.Context, _ *halovetv1.VerifyAuditChainRequest) (*halovetv1.VerifyAuditChainResponse, error) {
	rep, err := a.srv.store.VerifyAuditChain(ctx)
	if err != nil {
		return nil, toStatus(ctx, a.srv.log, err)
	}
	out := &halovetv1.VerifyAuditChainResponse{EventsChecked: rep.Events, Intact: len(rep.Broken) == 0}
	for _, b := range rep.Broken {
		out.Breaks = append(out.Breaks, &halovetv1.ChainBreak{Seq: b.Seq, Reason: b.Reason})
	}
	return out, nil
}
