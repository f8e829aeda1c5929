package service

import (
	"context"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// Authorised exemptions and official figures of the reporting Party: stored with their
// sources, and applied by AssessCompliance (controls.Overrides).

var exemptedUseText = map[halovetv1.ExemptedUse]string{
	halovetv1.ExemptedUse_EXEMPTED_USE_ESSENTIAL:                string(controls.UseEssential),
	halovetv1.ExemptedUse_EXEMPTED_USE_CRITICAL:                 string(controls.UseCritical),
	halovetv1.ExemptedUse_EXEMPTED_USE_LABORATORY:               string(controls.UseLaboratory),
	halovetv1.ExemptedUse_EXEMPTED_USE_HIGH_AMBIENT_TEMPERATURE: string(controls.UseHighAmbient),
}

var exemptedUseEnum = invert(exemptedUseText)

var officialKindText = map[halovetv1.OfficialFigureKind]string{
	halovetv1.OfficialFigureKind_OFFICIAL_FIGURE_KIND_BASELINE: "baseline",
	halovetv1.OfficialFigureKind_OFFICIAL_FIGURE_KIND_LIMIT:    "limit",
}

var officialKindEnum = invert(officialKindText)

func (c *consumptionServer) RecordExemptions(ctx context.Context, req *halovetv1.RecordExemptionsRequest) (*halovetv1.RecordExemptionsResponse, error) {
	in := make([]ledger.Exemption, len(req.GetExemptions()))
	var vs []fieldViolation
	for i, e := range req.GetExemptions() {
		in[i] = ledger.Exemption{Key: e.GetExemptionKey(), CountryCode: e.GetCountryCode(), Year: int(e.GetYear()), Scope: e.GetAnnexGroup(),
			Use: exemptedUseText[e.GetUse()], Amount: tonnesIn(indexed("exemptions", i, "amount"), e.GetAmount(), &vs), Source: e.GetSource(), Note: e.GetNote()}
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	es, err := c.srv.figures.RecordExemptions(ctx, in)
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	resp := &halovetv1.RecordExemptionsResponse{}
	for _, e := range es {
		resp.Exemptions = append(resp.Exemptions, exemptionToProto(store.Exemption(e)))
	}
	return resp, nil
}

func exemptionToProto(e store.Exemption) *halovetv1.AuthorisedExemption {
	return &halovetv1.AuthorisedExemption{ExemptionKey: e.Key, CountryCode: e.CountryCode, Year: int32(e.Year), AnnexGroup: e.Scope,
		Use: exemptedUseEnum[e.Use], Amount: dec(e.Amount), Unit: controlUnitProto(e.Unit), Source: e.Source, Note: e.Note}
}

func (c *consumptionServer) ListExemptions(ctx context.Context, req *halovetv1.ListExemptionsRequest) (*halovetv1.ListExemptionsResponse, error) {
	pg, vs, err := c.srv.openPage(ctx, "exemptions", req)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	if y := req.GetYear(); y != 0 {
		if v := checkQueryYear("year", y); v != nil {
			vs = append([]fieldViolation{*v}, vs...)
		}
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	es, err := c.srv.store.ListExemptionsPage(ctx, int(req.GetYear()), pg)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	out := &halovetv1.ListExemptionsResponse{}
	if es, out.NextPageToken, err = closePage(ctx, c.srv, "exemptions", req, pg, es); err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	for _, e := range es {
		out.Exemptions = append(out.Exemptions, exemptionToProto(e))
	}
	return out, nil
}

func (c *consumptionServer) RecordOfficialFigures(ctx context.Context, req *halovetv1.RecordOfficialFiguresRequest) (*halovetv1.RecordOfficialFiguresResponse, error) {
	in := make([]ledger.OfficialFigure, len(req.GetFigures()))
	var vs []fieldViolation
	for i, x := range req.GetFigures() {
		in[i] = ledger.OfficialFigure{Key: x.GetFigureKey(), CountryCode: x.GetCountryCode(), Kind: officialKindText[x.GetKind()],
			Scope: x.GetAnnexGroup(), Year: int(x.GetYear()), Value: tonnesIn(indexed("figures", i, "amount"), x.GetAmount(), &vs), Source: x.GetSource()}
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	fs, err := c.srv.figures.RecordOfficialFigures(ctx, in)
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	resp := &halovetv1.RecordOfficialFiguresResponse{}
	for _, f := range fs {
		resp.Figures = append(resp.Figures, officialToProto(store.OfficialFigure(f)))
	}
	return resp, nil
}

func officialToProto(f store.OfficialFigure) *halovetv1.OfficialFigure {
	return &halovetv1.OfficialFigure{FigureKey: f.Key, CountryCode: f.CountryCode, Kind: officialKindEnum[f.Kind], AnnexGroup: f.Scope,
		Year: int32(f.Year), Amount: dec(f.Value), Unit: controlUnitProto(f.Unit), Source: f.Source}
}

func (c *consumptionServer) ListOfficialFigures(ctx context.Context, req *halovetv1.ListOfficialFiguresRequest) (*halovetv1.ListOfficialFiguresResponse, error) {
	pg, vs, err := c.srv.openPage(ctx, "official-figures", req)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	fs, err := c.srv.store.ListOfficialFiguresPage(ctx, pg)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	out := &halovetv1.ListOfficialFiguresResponse{}
	if fs, out.NextPageToken, err = closePage(ctx, c.srv, "official-figures", req, pg, fs); err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	for _, f := range fs {
		out.Figures = append(out.Figures, officialToProto(f))
	}
	return out, nil
}
