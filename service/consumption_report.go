package service

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/controls"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
)

// The annual data report (Article 7) and HFC-23 by-product entries. The report is
// computed from the register's rows (shipment components with their ids, national entries
// with their keys) by the same classification as the consumption arithmetic
// (consumption_ledger.go), so its group totals equal GetConsumption's; a test compares them.

// hfc23Designation is the catalogue designation of Annex F Group II.
const hfc23Designation = "HFC-23"

func (c *consumptionServer) RecordHfc23Entries(ctx context.Context, req *halovetv1.RecordHfc23EntriesRequest) (*halovetv1.RecordHfc23EntriesResponse, error) {
	in := req.GetEntries()
	if len(in) == 0 || len(in) > maxYearFigures {
		return nil, invalid(fieldViolation{"entries", fmt.Sprintf("holds %d entries; give 1 to %d", len(in), maxYearFigures)})
	}
	var vs []fieldViolation
	add := func(v *fieldViolation) {
		if v != nil {
			vs = append(vs, *v)
		}
	}
	out := make([]store.HFC23Entry, 0, len(in))
	seen := map[string]int{}
	facYear := map[string]int{}
	for i, e := range in {
		f := fmt.Sprintf("entries[%d]", i)
		var se store.HFC23Entry
		var v *fieldViolation
		se.Key, v = keyText(f+".entry_key", e.GetEntryKey(), "HFC23-2025-PLANT-1")
		add(v)
		if j, dup := seen[se.Key]; dup && se.Key != "" {
			add(&fieldViolation{f + ".entry_key", fmt.Sprintf("%q is also the key of entries[%d]; each key once per call", se.Key, j)})
		}
		seen[se.Key] = i
		se.Facility = strings.TrimSpace(e.GetFacility())
		if se.Facility == "" || len(se.Facility) > maxEntryKeyBytes || !printableText(se.Facility) {
			add(&fieldViolation{f + ".facility", fmt.Sprintf("must name the facility (printable text of 1 to %d bytes)", maxEntryKeyBytes)})
		}
		se.Year = int(e.GetYear())
		add(checkQueryYear(f+".year", e.GetYear()))
		fy := fmt.Sprintf("%s/%d", se.Facility, se.Year)
		if j, dup := facYear[fy]; dup {
			add(&fieldViolation{f + ".facility", fmt.Sprintf("%s in %d is also in entries[%d]; one entry per facility and year", se.Facility, se.Year, j)})
		}
		facYear[fy] = i
		se.Generated, se.CapturedUsed, se.Destroyed, se.Emitted = e.GetGeneratedTonnes(), e.GetCapturedUsedTonnes(), e.GetDestroyedTonnes(), e.GetEmittedTonnes()
		for _, q := range []struct {
			name string
			v    float64
		}{{"generated_tonnes", se.Generated}, {"captured_used_tonnes", se.CapturedUsed}, {"destroyed_tonnes", se.Destroyed}, {"emitted_tonnes", se.Emitted}} {
			if !amountOK(q.v) || q.v > maxEntryTonnes {
				add(&fieldViolation{f + "." + q.name, fmt.Sprintf("is %v; accepted: metric tonnes from 0 to %g", q.v, float64(maxEntryTonnes))})
			}
		}
		if parts := se.CapturedUsed + se.Destroyed + se.Emitted; parts > se.Generated*(1+1e-9)+1e-9 {
			add(&fieldViolation{f + ".generated_tonnes", fmt.Sprintf("is %v t, less than captured + destroyed + emitted = %v t; what leaves a facility cannot exceed what it generated", se.Generated, parts)})
		}
		se.Note = strings.TrimSpace(e.GetNote())
		if len(se.Note) > maxEntryNoteBytes || !printableText(se.Note) {
			add(&fieldViolation{f + ".note", fmt.Sprintf("must be printable text of at most %d bytes", maxEntryNoteBytes)})
		}
		out = append(out, se)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if err := c.srv.store.PutHFC23Entries(ctx, out); errors.Is(err, store.ErrAlreadyExists) {
		return nil, status.Errorf(codes.AlreadyExists, "%v: the facility's figures for that year are stored under another entry_key; send them under that key to replace them (ListHfc23Entries shows the keys); nothing was stored", err)
	} else if err != nil {
		return nil, toStatus(ctx, c.srv.log, err)
	}
	gwp := c.srv.hfc23GWP()
	resp := &halovetv1.RecordHfc23EntriesResponse{}
	for _, e := range out {
		resp.Entries = append(resp.Entries, hfc23ToProto(e, gwp))
	}
	return resp, nil
}

// hfc23GWP is the Protocol GWP of HFC-23 in the current catalogue (Annex F Group II).
func (s *Server) hfc23GWP() float64 {
	if sub, ok := s.cat.Load().Substance(hfc23Designation); ok {
		return sub.ProtocolGWP()
	}
	return 0
}

func hfc23ToProto(e store.HFC23Entry, gwp float64) *halovetv1.Hfc23Entry {
	return &halovetv1.Hfc23Entry{EntryKey: e.Key, Facility: e.Facility, Year: int32(e.Year), GeneratedTonnes: e.Generated,
		CapturedUsedTonnes: e.CapturedUsed, DestroyedTonnes: e.Destroyed, EmittedTonnes: e.Emitted, EmittedCo2ETonnes: e.Emitted * gwp, Note: e.Note}
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

// exemptedPurpose: the purposes of the exempted uses (essential, critical, laboratory).
func exemptedPurpose(p string) bool {
	return p == "essential-use" || p == "critical-use" || p == "laboratory"
}

// reportSub is one substance's arithmetic in the report.
type reportSub struct {
	sub                                                             controls.Substance
	production, imports, exports, exportsNP, destruction, feed, qps float64
}

func (r *reportSub) tonnes() float64 {
	return r.production + r.imports - r.exports - r.destruction - r.feed - r.qps
}

type tradeKey struct {
	partner, substance string
	nonParty           bool
}

func (c *consumptionServer) GetYearReport(ctx context.Context, req *halovetv1.GetYearReportRequest) (*halovetv1.GetYearReportResponse, error) {
	if v := checkQueryYear("year", req.GetYear()); v != nil {
		return nil, invalid(*v)
	}
	year := int(req.GetYear())
	rep, err := c.srv.yearReport(ctx, year)
	if err != nil {
		return nil, arithmeticError(ctx, c.srv, err)
	}
	return rep, nil
}

func (s *Server) yearReport(ctx context.Context, year int) (*halovetv1.GetYearReportResponse, error) {
	cat := s.cat.Load()
	out := &halovetv1.GetYearReportResponse{Year: int32(year), State: "provisional"}
	if p, err := s.store.ReportingParty(ctx); err == nil {
		out.CountryCode = p.CountryCode
	} else if !errors.Is(err, store.ErrNoReportingParty) {
		return nil, err
	}
	lines, err := s.store.ShipmentLines(ctx, year)
	if err != nil {
		return nil, err
	}
	nats, err := s.store.NationalTotals(ctx, []int{year})
	if err != nil {
		return nil, err
	}
	hfc23, err := s.store.ListHFC23Entries(ctx, year)
	if err != nil {
		return nil, err
	}
	notes := map[string]bool{}
	var noteList []string
	addNote := func(n string) {
		if !notes[n] {
			notes[n] = true
			noteList = append(noteList, n)
		}
	}
	subs := map[string]*reportSub{}
	subOf := func(designation string) (*reportSub, bool, error) {
		sub, ok := cat.Substance(designation)
		if !ok {
			return nil, false, status.Errorf(codes.FailedPrecondition, "%d: data of %s are stored, but the catalogue has no such substance now; restore it in the catalogue (UpsertSubstance)", year, designation)
		}
		if sub.Group == substances.GroupNone {
			addNote("uncontrolled blend components are left out of the report")
			return nil, false, nil
		}
		r := subs[sub.Designation]
		if r == nil {
			r = &reportSub{sub: controls.SubstanceOf(sub)}
			subs[sub.Designation] = r
		}
		return r, true, nil
	}
	imports := map[tradeKey]*halovetv1.YearTradeLine{}
	exports := map[tradeKey]*halovetv1.YearTradeLine{}
	tradeLine := func(m map[tradeKey]*halovetv1.YearTradeLine, partner string, r *reportSub, nonParty bool) *halovetv1.YearTradeLine {
		k := tradeKey{partner, r.sub.Designation, nonParty}
		l := m[k]
		if l == nil {
			l = &halovetv1.YearTradeLine{PartnerCountry: partner, Substance: r.sub.Designation, AnnexGroup: string(r.sub.Group), PartnerNonParty: nonParty}
			m[k] = l
		}
		return l
	}
	type qtyKey struct{ substance, basis string }
	qty := map[string]map[qtyKey]*halovetv1.YearQuantityLine{"production": {}, "destruction": {}, "feedstock": {}, "qps": {}}
	qtyLine := func(kind string, r *reportSub, basis string) *halovetv1.YearQuantityLine {
		k := qtyKey{r.sub.Designation, basis}
		l := qty[kind][k]
		if l == nil {
			l = &halovetv1.YearQuantityLine{Substance: r.sub.Designation, AnnexGroup: string(r.sub.Group), Basis: basis}
			qty[kind][k] = l
		}
		return l
	}

	transit := 0.0
	uses := map[useKey]float64{}
	for _, l := range lines {
		r, ok, err := subOf(l.Designation)
		if err != nil {
			return nil, err
		}
		if !ok {
			continue
		}
		m := l.Tonnes
		switch l.Direction {
		case "transit":
			transit += m
			continue
		case "import":
			tl := tradeLine(imports, l.PartnerCountry, r, l.PartnerNonParty)
			tl.ShipmentIds = append(tl.ShipmentIds, l.ShipmentIDs...)
			if recovered(l.Condition) {
				tl.RecoveredTonnes += m
				continue
			}
			tl.NewTonnes += m
			r.imports += m
			switch {
			case l.Purpose == "feedstock" || l.Purpose == "process-agent":
				tl.FeedstockTonnes += m
				r.feed += m
				q := qtyLine("feedstock", r, "shipments")
				q.Tonnes += m
				q.ShipmentIds = append(q.ShipmentIds, l.ShipmentIDs...)
			case l.Purpose == "destruction":
				tl.DestructionTonnes += m
				r.destruction += m
				q := qtyLine("destruction", r, "shipments")
				q.Tonnes += m
				q.ShipmentIds = append(q.ShipmentIds, l.ShipmentIDs...)
			case l.Purpose == "qps" && r.sub.Group == substances.GroupEI:
				tl.QpsTonnes += m
				r.qps += m
				q := qtyLine("qps", r, "shipments")
				q.Tonnes += m
				q.ShipmentIds = append(q.ShipmentIds, l.ShipmentIDs...)
			case exemptedPurpose(l.Purpose):
				tl.ExemptedTonnes += m
			}
			if u := shipmentUse(store.ShipmentTotal{Direction: l.Direction, Purpose: l.Purpose, Condition: l.Condition}, r.sub.Group); u != "" {
				uses[useKey{year, r.sub.Designation, u}] += m
			}
		case "export", "re-export":
			np := l.PartnerNonParty && year >= nonPartyExportsFrom
			tl := tradeLine(exports, l.PartnerCountry, r, np)
			tl.ShipmentIds = append(tl.ShipmentIds, l.ShipmentIDs...)
			if recovered(l.Condition) {
				tl.RecoveredTonnes += m
				continue
			}
			tl.NewTonnes += m
			switch {
			case l.Purpose == "feedstock" || l.Purpose == "process-agent":
				tl.FeedstockTonnes += m
			case l.Purpose == "destruction":
				tl.DestructionTonnes += m
			case l.Purpose == "qps" && r.sub.Group == substances.GroupEI:
				tl.QpsTonnes += m
			case exemptedPurpose(l.Purpose):
				tl.ExemptedTonnes += m
			}
			if np {
				r.exportsNP += m
			} else {
				r.exports += m
			}
		default:
			return nil, fmt.Errorf("recorded shipments of %s in %d have direction %q, which the report does not know", l.Designation, year, l.Direction)
		}
	}
	for _, t := range nats {
		r, ok, err := subOf(t.Substance)
		if err != nil {
			return nil, err
		}
		if !ok {
			continue
		}
		m := t.Tonnes
		basis := "whole-year"
		if t.OutsideCustoms {
			basis = "outside-customs"
		}
		if deductedUse(t.Type) && !t.OutsideCustoms {
			if _, dup := uses[useKey{year, r.sub.Designation, t.Type}]; dup {
				addNote(fmt.Sprintf("national %s entries of %s (%s) left out: shipments declared for the use are deducted already", t.Type, t.Substance, strings.Join(t.Keys, ", ")))
				continue
			}
		}
		var q *halovetv1.YearQuantityLine
		switch t.Type {
		case store.EntryProduction:
			r.production += m
			q = qtyLine("production", r, "national-entry")
		case store.EntryDestruction:
			r.destruction += m
			q = qtyLine("destruction", r, basis)
		case store.EntryFeedstock:
			r.feed += m
			q = qtyLine("feedstock", r, basis)
		case store.EntryQPS:
			r.qps += m
			q = qtyLine("qps", r, basis)
		case store.EntryHistoricalImport:
			tl := tradeLine(imports, "", r, false)
			tl.NewTonnes += m
			tl.EntryKeys = append(tl.EntryKeys, t.Keys...)
			r.imports += m
		case store.EntryHistoricalExport, store.EntryHistoricalExportNonParty:
			np := t.Type == store.EntryHistoricalExportNonParty && year >= nonPartyExportsFrom
			tl := tradeLine(exports, "", r, np)
			tl.NewTonnes += m
			tl.EntryKeys = append(tl.EntryKeys, t.Keys...)
			if np {
				r.exportsNP += m
			} else {
				r.exports += m
			}
		default:
			return nil, fmt.Errorf("national entries of %s in %d have kind %q, which the report does not know", t.Substance, year, t.Type)
		}
		if q != nil {
			q.Tonnes += m
			q.EntryKeys = append(q.EntryKeys, t.Keys...)
		}
	}

	// Group totals, summed in designation order (as controls.Calculate does).
	names := make([]string, 0, len(subs))
	for n := range subs {
		names = append(names, n)
	}
	slices.Sort(names)
	for _, g := range substances.AllGroups {
		gt := &halovetv1.YearGroupTotal{AnnexGroup: string(g)}
		for _, n := range names {
			r := subs[n]
			if r.sub.Group != g {
				continue
			}
			gt.HasData = true
			t := r.tonnes()
			gt.ProductionTonnes += r.production
			gt.ImportTonnes += r.imports
			gt.ExportTonnes += r.exports
			gt.DestructionTonnes += r.destruction
			gt.FeedstockTonnes += r.feed
			gt.QpsTonnes += r.qps
			gt.ExportNonPartyTonnes += r.exportsNP
			gt.ConsumptionTonnes += t
			gt.ConsumptionOdpTonnes += t * r.sub.ODP
			gt.ConsumptionCo2ETonnes += t * r.sub.GWP
		}
		if !gt.HasData {
			out.NoDataGroups = append(out.NoDataGroups, string(g))
		}
		out.Groups = append(out.Groups, gt)
	}
	out.Imports = sortedTrade(imports)
	out.Exports = sortedTrade(exports)
	for _, l := range out.Imports {
		if l.PartnerNonParty {
			out.ImportsNonParty = append(out.ImportsNonParty, l)
		}
	}
	for _, l := range out.Exports {
		if l.PartnerNonParty {
			out.ExportsNonParty = append(out.ExportsNonParty, l)
		}
	}
	out.Production = sortedQty(qty["production"])
	out.Destruction = sortedQty(qty["destruction"])
	out.Feedstock = sortedQty(qty["feedstock"])
	out.Qps = sortedQty(qty["qps"])
	exs, err := s.store.ListExemptions(ctx, year)
	if err != nil {
		return nil, err
	}
	for _, e := range exs {
		if e.CountryCode == out.CountryCode {
			out.Exemptions = append(out.Exemptions, exemptionToProto(e))
		}
	}
	gwp := s.hfc23GWP()
	for _, e := range hfc23 {
		out.Hfc23 = append(out.Hfc23, hfc23ToProto(e, gwp))
	}
	if transit > 0 {
		addNote(fmt.Sprintf("%s t in transit left out (neither imported nor exported)", fmtT(transit)))
	}
	if len(out.Hfc23) > 0 {
		addNote("HFC-23 by-product (generation, capture, destruction, emission per facility) is reported beside Annex F consumption and is not part of it (Art. 2J paras 6-7; Art. 3 para 1(d); Art. 7 para 3 ter)")
	}
	closed, isClosed, err := s.store.YearClosed(ctx, year)
	if err != nil {
		return nil, err
	}
	if isClosed {
		out.State = "closed"
		addNote(fmt.Sprintf("the year is closed (since %s, by %s: %s): its shipments, national entries, exemptions, limits and HFC-23 entries do not change until it is reopened, and neither does this report",
			closed.ClosedAt.UTC().Format("2006-01-02 15:04:05 UTC"), orUnknown(closed.ClosedBy), closed.Reason))
	} else {
		addNote("the year is open: its figures are provisional and change with the register")
	}
	out.Notes = noteList
	return out, nil
}

func sortedTrade(m map[tradeKey]*halovetv1.YearTradeLine) []*halovetv1.YearTradeLine {
	out := make([]*halovetv1.YearTradeLine, 0, len(m))
	for _, l := range m {
		slices.Sort(l.ShipmentIds)
		slices.Sort(l.EntryKeys)
		out = append(out, l)
	}
	slices.SortFunc(out, func(a, b *halovetv1.YearTradeLine) int {
		return cmp.Or(cmp.Compare(a.PartnerCountry, b.PartnerCountry), cmp.Compare(a.Substance, b.Substance),
			cmp.Compare(boolInt(a.PartnerNonParty), boolInt(b.PartnerNonParty)))
	})
	return out
}

func sortedQty[K comparable](m map[K]*halovetv1.YearQuantityLine) []*halovetv1.YearQuantityLine {
	out := make([]*halovetv1.YearQuantityLine, 0, len(m))
	for _, l := range m {
		slices.Sort(l.ShipmentIds)
		slices.Sort(l.EntryKeys)
		out = append(out, l)
	}
	slices.SortFunc(out, func(a, b *halovetv1.YearQuantityLine) int {
		return cmp.Or(cmp.Compare(a.Substance, b.Substance), cmp.Compare(a.Basis, b.Basis))
	})
	return out
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

func orUnknown(s string) string {
	if s == "" {
		return "an unnamed caller"
	}
	return s
}
