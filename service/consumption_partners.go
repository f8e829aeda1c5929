package service

import (
	"context"

	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// Partner reconciliation: what partners report as exported to the reporting Party against
// the recorded imports from them, per partner and substance. A gap is the usual first sign
// of trade that passed no licence (common practice of national ozone units).

func (c *consumptionServer) RecordPartnerExports(ctx context.Context, req *halovetv1.RecordPartnerExportsRequest) (*halovetv1.RecordPartnerExportsResponse, error) {
	in := make([]ledger.PartnerExport, len(req.GetReports()))
	var vs []fieldViolation
	for i, r := range req.GetReports() {
		in[i] = ledger.PartnerExport{Key: r.GetReportKey(), Year: int(r.GetYear()), Partner: r.GetPartnerCountry(),
			Substance: r.GetSubstance(), Tonnes: tonnesIn(indexed("reports", i, "metric_tonnes"), r.GetMetricTonnes(), &vs), Source: r.GetSource()}
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	rs, err := c.srv.figures.RecordPartnerExports(ctx, in)
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	resp := &halovetv1.RecordPartnerExportsResponse{}
	for _, r := range rs {
		resp.Reports = append(resp.Reports, &halovetv1.PartnerExport{ReportKey: r.Key, Year: int32(r.Year), PartnerCountry: r.Partner,
			Substance: r.Substance, MetricTonnes: dec(r.Tonnes), Source: r.Source})
	}
	return resp, nil
}

func (c *consumptionServer) ReconcilePartnerExports(ctx context.Context, req *halovetv1.ReconcilePartnerExportsRequest) (*halovetv1.ReconcilePartnerExportsResponse, error) {
	var vs []fieldViolation
	tol := tonnesIn("tolerance_ratio", req.GetToleranceRatio(), &vs)
	minGap := tonnesIn("min_gap_tonnes", req.GetMinGapTonnes(), &vs)
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	r, err := c.srv.cons.ReconcilePartnerExports(ctx, int(req.GetYear()), tol, minGap)
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	out := &halovetv1.ReconcilePartnerExportsResponse{Year: int32(r.Year), ToleranceRatio: dec(r.Tolerance), PairsCompared: int32(r.PairsCompared),
		PartnersNotReporting: r.PartnersNotReporting}
	for _, g := range r.Gaps {
		out.Gaps = append(out.Gaps, &halovetv1.PartnerGap{PartnerCountry: g.Partner, Substance: g.Substance, Year: int32(r.Year),
			PartnerTonnes: dec(g.PartnerTonnes), RecordedTonnes: dec(g.RecordedTonnes), GapTonnes: dec(g.GapTonnes), ShipmentIds: g.ShipmentIDs, ReportKeys: g.ReportKeys})
	}
	return out, nil
}
