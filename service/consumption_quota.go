package service

import (
	"context"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// Quota planning (ledger.Consumption.PlanQuotas): next year's allowed level, split among
// the companies by their recorded imports, and on request issued as draft licences in one
// transaction.

func (c *consumptionServer) PlanQuotas(ctx context.Context, req *halovetv1.PlanQuotasRequest) (*halovetv1.PlanQuotasResponse, error) {
	var vs []fieldViolation
	fraction := tonnesIn("fraction_ratio", req.GetFractionRatio(), &vs)
	gran := tonnesIn("granularity_amount", req.GetGranularityAmount(), &vs)
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	q := ledger.QuotaPlanRequest{AnnexGroup: req.GetAnnexGroup(), Year: int(req.GetYear()), Fraction: fraction,
		Granularity: gran, IssueDrafts: req.GetIssueDrafts(),
		MayIssue: func() error { return requireRole(ctx, "issuing the drafts (issue_drafts)", access.RoleOfficer) }}
	for _, y := range req.GetReferenceYears() {
		q.ReferenceYears = append(q.ReferenceYears, int(y))
	}
	plan, err := c.srv.cons.PlanQuotas(ctx, q)
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	if len(plan.Issued) > 0 {
		c.srv.registerChanged(ctx, ledger.Change{Licences: plan.Issued})
	}
	lv := plan.Level
	out := &halovetv1.PlanQuotasResponse{Unit: controlUnitProto(string(lv.Unit)), AllowedAmount: dec(lv.Value), Year: req.GetYear(),
		AnnexGroup: string(plan.Scope), AllowedPercent: dec(lv.Percent), Notes: plan.Notes,
		DistributableAmount: dec(plan.Plan.Distributable), DistributedAmount: dec(plan.Plan.Distributed)}
	for _, p := range plan.Proposals {
		out.Proposals = append(out.Proposals, &halovetv1.QuotaProposal{CompanyId: p.CompanyID, ReferenceShareRatio: dec(p.ReferenceShare),
			QuotaAmount: dec(p.Amount), ReferenceAmount: dec(p.Reference), ExactShareAmount: dec(p.ExactShare), DraftLicenceNumber: p.DraftLicenceNumber})
	}
	return out, nil
}
