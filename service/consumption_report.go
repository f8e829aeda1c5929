package service

import (
	"context"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// The annual data report (Article 7) and HFC-23 by-product entries. The report is
// computed by ledger.Consumption.YearReport from the register's rows (shipment components
// with their ids, national entries with their keys) by the same classification as the
// consumption arithmetic, so its group totals equal GetConsumption's; a test compares them.

func (c *consumptionServer) RecordHfc23Entries(ctx context.Context, req *halovetv1.RecordHfc23EntriesRequest) (*halovetv1.RecordHfc23EntriesResponse, error) {
	in := make([]ledger.HFC23Entry, len(req.GetEntries()))
	var vs []fieldViolation
	for i, e := range req.GetEntries() {
		f := func(name, s string) exact.Decimal { return tonnesIn(indexed("entries", i, name), s, &vs) }
		in[i] = ledger.HFC23Entry{Key: e.GetEntryKey(), Facility: e.GetFacility(), Year: int(e.GetYear()),
			Generated: f("generated_tonnes", e.GetGeneratedTonnes()), CapturedUsed: f("captured_used_tonnes", e.GetCapturedUsedTonnes()),
			Destroyed: f("destroyed_tonnes", e.GetDestroyedTonnes()), Emitted: f("emitted_tonnes", e.GetEmittedTonnes()), Note: e.GetNote()}
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	es, err := c.srv.figures.RecordHFC23Entries(ctx, in)
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	gwp := c.srv.hfc23GWP()
	resp := &halovetv1.RecordHfc23EntriesResponse{}
	for _, e := range es {
		resp.Entries = append(resp.Entries, hfc23ToProto(store.HFC23Entry(e), gwp))
	}
	return resp, nil
}

// hfc23GWP is the Protocol GWP of HFC-23 in the current catalogue (Annex F Group II).
func (s *Server) hfc23GWP() exact.Decimal { return ledger.HFC23GWP(s.cat.Load()) }

func hfc23ToProto(e store.HFC23Entry, gwp exact.Decimal) *halovetv1.Hfc23Entry {
	return &halovetv1.Hfc23Entry{EntryKey: e.Key, Facility: e.Facility, Year: int32(e.Year), GeneratedTonnes: dec(e.Generated),
		CapturedUsedTonnes: dec(e.CapturedUsed), DestroyedTonnes: dec(e.Destroyed), EmittedTonnes: dec(e.Emitted),
		EmittedCo2ETonnes: dec(e.Emitted.Mul(gwp)), Note: e.Note}
}

func (c *consumptionServer) ListHfc23Entries(ctx context.Context, req *halovetv1.ListHfc23EntriesRequest) (*halovetv1.ListHfc23EntriesResponse, error) {
	pg, vs, err := c.srv.openPage(ctx, "hfc23-entries", req)
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
	es, err := c.srv.store.ListHFC23EntriesPage(ctx, int(req.GetYear()), pg)
	if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	gwp := c.srv.hfc23GWP()
	out := &halovetv1.ListHfc23EntriesResponse{}
	if es, out.NextPageToken, err = closePage(ctx, c.srv, "hfc23-entries", req, pg, es); err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	for _, e := range es {
		out.Entries = append(out.Entries, hfc23ToProto(e, gwp))
	}
	return out, nil
}

func (c *consumptionServer) GetYearReport(ctx context.Context, req *halovetv1.GetYearReportRequest) (*halovetv1.GetYearReportResponse, error) {
	r, err := c.srv.cons.YearReport(ctx, int(req.GetYear()))
	if err != nil {
		return nil, c.srv.ledgerStatus(ctx, err)
	}
	out := &halovetv1.GetYearReportResponse{Year: int32(r.Year), State: reportStateProto[r.State], CountryCode: r.CountryCode, Notes: r.Notes,
		Imports: tradeLinesToProto(r.Imports), Exports: tradeLinesToProto(r.Exports),
		ImportsNonParty: tradeLinesToProto(r.ImportsNonParty), ExportsNonParty: tradeLinesToProto(r.ExportsNonParty),
		Production: qtyLinesToProto(r.Production), Destruction: qtyLinesToProto(r.Destruction),
		Feedstock: qtyLinesToProto(r.Feedstock), Qps: qtyLinesToProto(r.QPS)}
	for _, g := range r.Groups {
		out.Groups = append(out.Groups, &halovetv1.YearGroupTotal{AnnexGroup: string(g.AnnexGroup), HasData: g.HasData,
			ProductionTonnes: decIf(g.Production, g.HasData), ImportTonnes: decIf(g.Imports, g.HasData), ExportTonnes: decIf(g.Exports, g.HasData),
			DestructionTonnes: decIf(g.Destruction, g.HasData), FeedstockTonnes: decIf(g.Feedstock, g.HasData), QpsTonnes: decIf(g.QPS, g.HasData),
			ExportNonPartyTonnes: decIf(g.ExportsNonParty, g.HasData), ConsumptionTonnes: decIf(g.ConsumptionTonnes, g.HasData),
			ConsumptionOdpTonnes: decIf(g.ConsumptionODPTonnes, g.HasData), ConsumptionCo2ETonnes: decIf(g.ConsumptionCO2eTonnes, g.HasData)})
	}
	for _, g := range r.NoDataGroups {
		out.NoDataGroups = append(out.NoDataGroups, string(g))
	}
	for _, e := range r.Exemptions {
		out.Exemptions = append(out.Exemptions, exemptionToProto(store.Exemption(e)))
	}
	for _, e := range r.HFC23 {
		out.Hfc23 = append(out.Hfc23, hfc23ToProto(store.HFC23Entry(e), r.HFC23GWP))
	}
	return out, nil
}

func tradeLinesToProto(ls []ledger.TradeLine) []*halovetv1.YearTradeLine {
	var out []*halovetv1.YearTradeLine
	for _, l := range ls {
		out = append(out, &halovetv1.YearTradeLine{PartnerCountry: l.PartnerCountry, Substance: l.Substance, AnnexGroup: l.AnnexGroup,
			PartnerNonParty: l.PartnerNonParty, NewTonnes: dec(l.NewTonnes), RecoveredTonnes: dec(l.RecoveredTonnes), FeedstockTonnes: dec(l.FeedstockTonnes),
			DestructionTonnes: dec(l.DestructionTonnes), QpsTonnes: dec(l.QPSTonnes), ExemptedTonnes: dec(l.ExemptedTonnes),
			ShipmentIds: l.ShipmentIDs, EntryKeys: l.EntryKeys})
	}
	return out
}

func qtyLinesToProto(ls []ledger.QuantityLine) []*halovetv1.YearQuantityLine {
	var out []*halovetv1.YearQuantityLine
	for _, l := range ls {
		out = append(out, &halovetv1.YearQuantityLine{Substance: l.Substance, AnnexGroup: l.AnnexGroup, Basis: basisProto[l.Basis],
			Tonnes: dec(l.Tonnes), ShipmentIds: l.ShipmentIDs, EntryKeys: l.EntryKeys})
	}
	return out
}
