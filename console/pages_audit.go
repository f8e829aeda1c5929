package console

import (
	"net/http"
	"strings"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

const (
	rpcAuditList   = "/halovet.v1.AccessService/ListAuditEvents"
	rpcAuditVerify = "/halovet.v1.AccessService/VerifyAuditChain"
)

type auditData struct {
	ObjectType, ObjectKey, Actor string
	Events                       []*halovetv1.AuditEvent
	Next                         string
	Chain                        *halovetv1.VerifyAuditChainResponse
	CanVerify                    bool
}

// audit lists the audit log, newest first as the server gives it, filtered by object and
// actor; the chain check runs when asked (it reads the whole log).
func (c *Console) audit(w http.ResponseWriter, r *http.Request, rq *request) {
	q := r.URL.Query()
	d := auditData{ObjectType: strings.TrimSpace(q.Get("object_type")), ObjectKey: strings.TrimSpace(q.Get("object_key")),
		Actor: strings.TrimSpace(q.Get("actor")), CanVerify: c.allowed(rq, rpcAuditVerify)}
	client := halovetv1.NewAccessServiceClient(c.cfg.Conn)
	resp, err := client.ListAuditEvents(c.ctx(r, rq, rpcAuditList), &halovetv1.ListAuditEventsRequest{
		ObjectType: d.ObjectType, ObjectKey: d.ObjectKey, Actor: d.Actor, PageSize: 200, PageToken: q.Get("page")})
	if err != nil {
		c.callFailed(w, r, rq, "reading the audit log", err)
		return
	}
	d.Events, d.Next = resp.GetEvents(), resp.GetNextPageToken()
	if q.Get("verify") == "1" && d.CanVerify {
		if d.Chain, err = client.VerifyAuditChain(c.ctx(r, rq, rpcAuditVerify), &halovetv1.VerifyAuditChainRequest{}); err != nil {
			c.callFailed(w, r, rq, "checking the audit chain", err)
			return
		}
	}
	c.render(w, r, rq.s, http.StatusOK, "audit", "Audit log", d)
}
