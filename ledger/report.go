package ledger

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// The year report: one reporting year's trade per partner, production, destruction,
// feedstock and QPS quantities, group totals, exemptions and HFC-23 by-product, each
// figure traced to the shipments and national entries behind it, read in one snapshot.

// TradeLine is one partner's imports or exports of one substance in the year.
type TradeLine struct {
	PartnerCountry    string // "" for historical totals
	Substance         string
	AnnexGroup        string
	PartnerNonParty   bool
	NewTonnes         exact.Decimal
	RecoveredTonnes   exact.Decimal // used, recycled or reclaimed
	FeedstockTonnes   exact.Decimal
	DestructionTonnes exact.Decimal
	QPSTonnes         exact.Decimal
	ExemptedTonnes    exact.Decimal
	ShipmentIDs       []int64
	EntryKeys         []string
}

// QuantityLine is one substance's production, destruction, feedstock or QPS quantity on
// one basis ("shipments", "national-entry", "whole-year", "outside-customs").
type QuantityLine struct {
	Substance   string
	AnnexGroup  string
	Basis       string
	Tonnes      exact.Decimal
	ShipmentIDs []int64
	EntryKeys   []string
}

// GroupTotal is one Annex group's figures of the year.
type GroupTotal struct {
	AnnexGroup                                                     substances.Group
	HasData                                                        bool
	Production, Imports, Exports, Destruction, Feedstock, QPS      exact.Decimal
	ExportsNonParty                                                exact.Decimal
	ConsumptionTonnes, ConsumptionODPTonnes, ConsumptionCO2eTonnes exact.Decimal
}

// YearReport is the report of one reporting year.
type YearReport struct {
	Year            int
	CountryCode     string
	State           string       // "provisional" or "closed"
	Groups          []GroupTotal // every Annex group, in order
	NoDataGroups    []substances.Group
	Imports         []TradeLine
	Exports         []TradeLine
	ImportsNonParty []TradeLine // the Imports lines from non-Parties
	ExportsNonParty []TradeLine
	Production      []QuantityLine
	Destruction     []QuantityLine
	Feedstock       []QuantityLine
	QPS             []QuantityLine
	Exemptions      []Exemption // the reporting Party's
	HFC23           []HFC23Entry
	HFC23GWP        exact.Decimal
	Notes           []string
}

// reportSub is one substance's arithmetic in the report.
type reportSub struct {
	sub                                                             controls.Substance
	production, imports, exports, exportsNP, destruction, feed, qps exact.Decimal
}

func (r *reportSub) tonnes() exact.Decimal {
	return exact.Sum(r.production, r.imports).Sub(exact.Sum(r.exports, r.destruction, r.feed, r.qps))
}

type tradeKey struct {
	partner, substance string
	nonParty           bool
}

type qtyKey struct{ substance, basis string }

// exemptedPurpose: the purposes of the exempted uses (essential, critical, laboratory).
func exemptedPurpose(p terms.Purpose) bool {
	return p == terms.PurposeEssentialUse || p == terms.PurposeCriticalUse || p == terms.PurposeLaboratory
}

// yearReportBuilder accumulates one report.
type yearReportBuilder struct {
	year    int
	cat     *substances.Catalogue
	notes   []string
	subs    map[string]*reportSub
	imports map[tradeKey]*TradeLine
	exports map[tradeKey]*TradeLine
	qty     map[string]map[qtyKey]*QuantityLine
	uses    map[controls.UseKey]exact.Decimal
	transit exact.Decimal
}

func (b *yearReportBuilder) addNote(n string) {
	if !slices.Contains(b.notes, n) {
		b.notes = append(b.notes, n)
	}
}

func (b *yearReportBuilder) subOf(designation string) (*reportSub, bool, error) {
	sub, ok := b.cat.Substance(designation)
	if !ok {
		return nil, false, refused(fmt.Sprintf("%d: data of %s are stored, but the catalogue has no such substance now; restore it in the catalogue (UpsertSubstance)", b.year, designation))
	}
	if sub.Group == substances.GroupNone {
		b.addNote("uncontrolled blend components are left out of the report")
		return nil, false, nil
	}
	r := b.subs[sub.Designation]
	if r == nil {
		r = &reportSub{sub: controls.SubstanceOf(sub)}
		b.subs[sub.Designation] = r
	}
	return r, true, nil
}

func (b *yearReportBuilder) trade(m map[tradeKey]*TradeLine, partner string, r *reportSub, nonParty bool) *TradeLine {
	k := tradeKey{partner, r.sub.Designation, nonParty}
	l := m[k]
	if l == nil {
		l = &TradeLine{PartnerCountry: partner, Substance: r.sub.Designation, AnnexGroup: string(r.sub.Group), PartnerNonParty: nonParty}
		m[k] = l
	}
	return l
}

func (b *yearReportBuilder) quantity(kind string, r *reportSub, basis string) *QuantityLine {
	k := qtyKey{r.sub.Designation, basis}
	l := b.qty[kind][k]
	if l == nil {
		l = &QuantityLine{Substance: r.sub.Designation, AnnexGroup: string(r.sub.Group), Basis: basis}
		b.qty[kind][k] = l
	}
	return l
}

// purposeTonnes adds m to the trade line's column for purpose and reports which
// deducted use, if any, it is ("feedstock", "destruction", "qps").
func purposeTonnes(tl *TradeLine, purpose terms.Purpose, g substances.Group, m exact.Decimal) string {
	switch {
	case purpose == terms.PurposeFeedstock || purpose == terms.PurposeProcessAgent:
		tl.FeedstockTonnes = tl.FeedstockTonnes.Add(m)
		return "feedstock"
	case purpose == terms.PurposeDestruction:
		tl.DestructionTonnes = tl.DestructionTonnes.Add(m)
		return "destruction"
	case purpose == terms.PurposeQPS && g == substances.GroupEI:
		tl.QPSTonnes = tl.QPSTonnes.Add(m)
		return "qps"
	case exemptedPurpose(purpose):
		tl.ExemptedTonnes = tl.ExemptedTonnes.Add(m)
	}
	return ""
}

func (b *yearReportBuilder) shipment(l ShipmentLine) error {
	r, ok, err := b.subOf(l.Designation)
	if err != nil || !ok {
		return err
	}
	m := l.Tonnes
	switch l.Direction {
	case terms.DirectionTransit:
		b.transit = b.transit.Add(m)
	case terms.DirectionImport:
		tl := b.trade(b.imports, l.PartnerCountry, r, l.PartnerNonParty)
		tl.ShipmentIDs = append(tl.ShipmentIDs, l.ShipmentIDs...)
		if controls.Recovered(l.Condition) {
			tl.RecoveredTonnes = tl.RecoveredTonnes.Add(m)
			return nil
		}
		tl.NewTonnes = tl.NewTonnes.Add(m)
		r.imports = r.imports.Add(m)
		if kind := purposeTonnes(tl, l.Purpose, r.sub.Group, m); kind != "" {
			switch kind {
			case "feedstock":
				r.feed = r.feed.Add(m)
			case "destruction":
				r.destruction = r.destruction.Add(m)
			case "qps":
				r.qps = r.qps.Add(m)
			}
			q := b.quantity(kind, r, "shipments")
			q.Tonnes = q.Tonnes.Add(m)
			q.ShipmentIDs = append(q.ShipmentIDs, l.ShipmentIDs...)
		}
		if u := controls.ShipmentUse(l.Direction, l.Purpose, l.Condition, r.sub.Group); u != "" {
			k := controls.UseKey{Year: b.year, Substance: r.sub.Designation, Use: u}
			b.uses[k] = b.uses[k].Add(l.Tonnes)
		}
	case terms.DirectionExport, terms.DirectionReExport:
		np := l.PartnerNonParty && b.year >= controls.NonPartyExportsFrom
		tl := b.trade(b.exports, l.PartnerCountry, r, np)
		tl.ShipmentIDs = append(tl.ShipmentIDs, l.ShipmentIDs...)
		if controls.Recovered(l.Condition) {
			tl.RecoveredTonnes = tl.RecoveredTonnes.Add(m)
			return nil
		}
		tl.NewTonnes = tl.NewTonnes.Add(m)
		purposeTonnes(tl, l.Purpose, r.sub.Group, m)
		if np {
			r.exportsNP = r.exportsNP.Add(m)
		} else {
			r.exports = r.exports.Add(m)
		}
	default:
		return fmt.Errorf("recorded shipments of %s in %d have direction %q, which the report does not know", l.Designation, b.year, l.Direction)
	}
	return nil
}

func (b *yearReportBuilder) entry(t controls.NationalTotal) error {
	r, ok, err := b.subOf(t.Substance)
	if err != nil || !ok {
		return err
	}
	m := t.Tonnes
	basis := "whole-year"
	if t.OutsideCustoms {
		basis = "outside-customs"
	}
	if controls.DeductedUse(t.Kind) && !t.OutsideCustoms {
		if _, dup := b.uses[controls.UseKey{Year: b.year, Substance: r.sub.Designation, Use: t.Kind}]; dup {
			b.addNote(fmt.Sprintf("national %s entries of %s (%s) left out: shipments declared for the use are deducted already", t.Kind, t.Substance, strings.Join(t.Keys, ", ")))
			return nil
		}
	}
	var q *QuantityLine
	switch t.Kind {
	case controls.EntryProduction:
		r.production = r.production.Add(m)
		q = b.quantity("production", r, "national-entry")
	case controls.EntryDestruction:
		r.destruction = r.destruction.Add(m)
		q = b.quantity("destruction", r, basis)
	case controls.EntryFeedstock:
		r.feed = r.feed.Add(m)
		q = b.quantity("feedstock", r, basis)
	case controls.EntryQPS:
		r.qps = r.qps.Add(m)
		q = b.quantity("qps", r, basis)
	case controls.EntryHistoricalImport:
		tl := b.trade(b.imports, "", r, false)
		tl.NewTonnes = tl.NewTonnes.Add(m)
		tl.EntryKeys = append(tl.EntryKeys, t.Keys...)
		r.imports = r.imports.Add(m)
	case controls.EntryHistoricalExport, controls.EntryHistoricalExportNonParty:
		np := t.Kind == controls.EntryHistoricalExportNonParty && b.year >= controls.NonPartyExportsFrom
		tl := b.trade(b.exports, "", r, np)
		tl.NewTonnes = tl.NewTonnes.Add(m)
		tl.EntryKeys = append(tl.EntryKeys, t.Keys...)
		if np {
			r.exportsNP = r.exportsNP.Add(m)
		} else {
			r.exports = r.exports.Add(m)
		}
	default:
		return fmt.Errorf("national entries of %s in %d have kind %q, which the report does not know", t.Substance, b.year, t.Kind)
	}
	if q != nil {
		q.Tonnes = q.Tonnes.Add(m)
		q.EntryKeys = append(q.EntryKeys, t.Keys...)
	}
	return nil
}

// groups sums the group totals, in designation order (as controls.Calculate does).
func (b *yearReportBuilder) groups(out *YearReport) {
	names := make([]string, 0, len(b.subs))
	for n := range b.subs {
		names = append(names, n)
	}
	slices.Sort(names)
	for _, g := range substances.AllGroups {
		gt := GroupTotal{AnnexGroup: g}
		for _, n := range names {
			r := b.subs[n]
			if r.sub.Group != g {
				continue
			}
			gt.HasData = true
			t := r.tonnes()
			gt.ConsumptionODPTonnes = gt.ConsumptionODPTonnes.Add(t.Mul(r.sub.ODP))
			gt.ConsumptionCO2eTonnes = gt.ConsumptionCO2eTonnes.Add(t.Mul(r.sub.GWP))
			gt.Production = gt.Production.Add(r.production)
			gt.Imports = gt.Imports.Add(r.imports)
			gt.Exports = gt.Exports.Add(r.exports)
			gt.Destruction = gt.Destruction.Add(r.destruction)
			gt.Feedstock = gt.Feedstock.Add(r.feed)
			gt.QPS = gt.QPS.Add(r.qps)
			gt.ExportsNonParty = gt.ExportsNonParty.Add(r.exportsNP)
			gt.ConsumptionTonnes = gt.ConsumptionTonnes.Add(t)
		}
		if !gt.HasData {
			out.NoDataGroups = append(out.NoDataGroups, g)
		}
		out.Groups = append(out.Groups, gt)
	}
}

// YearReport builds the report of one year from one snapshot of the register.
func (c *Consumption) YearReport(ctx context.Context, year int) (YearReport, error) {
	if v := CheckQueryYear("year", year); v != nil {
		return YearReport{}, invalid(*v)
	}
	var out YearReport
	err := c.reports.Snapshot(ctx, func(r ReportReader) error {
		var err error
		out, err = c.yearReport(ctx, r, year)
		return err
	})
	return out, err
}

func (c *Consumption) yearReport(ctx context.Context, r ReportReader, year int) (YearReport, error) {
	cat := c.catalogue()
	out := YearReport{Year: year, State: "provisional"}
	if p, err := r.ReportingParty(ctx); err == nil {
		out.CountryCode = p.Code
	} else if !errors.Is(err, ErrNoReportingParty) {
		return out, err
	}
	lines, err := r.ShipmentLines(ctx, year)
	if err != nil {
		return out, err
	}
	nats, err := r.NationalTotals(ctx, []int{year})
	if err != nil {
		return out, err
	}
	if out.HFC23, err = r.HFC23Entries(ctx, year); err != nil {
		return out, err
	}
	b := &yearReportBuilder{year: year, cat: cat, subs: map[string]*reportSub{},
		imports: map[tradeKey]*TradeLine{}, exports: map[tradeKey]*TradeLine{}, uses: map[controls.UseKey]exact.Decimal{},
		qty: map[string]map[qtyKey]*QuantityLine{"production": {}, "destruction": {}, "feedstock": {}, "qps": {}}}
	for _, l := range lines {
		if err := b.shipment(l); err != nil {
			return out, err
		}
	}
	for _, t := range nats {
		if err := b.entry(t); err != nil {
			return out, err
		}
	}
	b.groups(&out)
	out.Imports, out.Exports = sortedTrade(b.imports), sortedTrade(b.exports)
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
	out.Production, out.Destruction = sortedQty(b.qty["production"]), sortedQty(b.qty["destruction"])
	out.Feedstock, out.QPS = sortedQty(b.qty["feedstock"]), sortedQty(b.qty["qps"])
	exs, err := r.Exemptions(ctx, year)
	if err != nil {
		return out, err
	}
	for _, e := range exs {
		if e.CountryCode == out.CountryCode {
			out.Exemptions = append(out.Exemptions, e)
		}
	}
	out.HFC23GWP = HFC23GWP(cat)
	if b.transit.Sign() > 0 {
		b.addNote(fmt.Sprintf("%s t in transit left out (neither imported nor exported)", controls.FormatExact(b.transit)))
	}
	if len(out.HFC23) > 0 {
		b.addNote("HFC-23 by-product (generation, capture, destruction, emission per facility) is reported beside Annex F consumption and is not part of it (Art. 2J paras 6-7; Art. 3 para 1(d); Art. 7 para 3 ter)")
	}
	closed, isClosed, err := r.YearClosed(ctx, year)
	if err != nil {
		return out, err
	}
	if isClosed {
		out.State = "closed"
		b.addNote(fmt.Sprintf("the year is closed (since %s, by %s: %s): its shipments, national entries, exemptions, limits and HFC-23 entries do not change until it is reopened, and neither does this report",
			closed.ClosedAt.UTC().Format("2006-01-02 15:04:05 UTC"), orUnknown(closed.ClosedBy), closed.Reason))
	} else {
		b.addNote("the year is open: its figures are provisional and change with the register")
	}
	out.Notes = b.notes
	return out, nil
}

func sortedTrade(m map[tradeKey]*TradeLine) []TradeLine {
	out := make([]TradeLine, 0, len(m))
	for _, l := range m {
		slices.Sort(l.ShipmentIDs)
		slices.Sort(l.EntryKeys)
		out = append(out, *l)
	}
	slices.SortFunc(out, func(a, b TradeLine) int {
		return cmp.Or(cmp.Compare(a.PartnerCountry, b.PartnerCountry), cmp.Compare(a.Substance, b.Substance),
			cmp.Compare(boolInt(a.PartnerNonParty), boolInt(b.PartnerNonParty)))
	})
	return out
}

func sortedQty(m map[qtyKey]*QuantityLine) []QuantityLine {
	out := make([]QuantityLine, 0, len(m))
	for _, l := range m {
		slices.Sort(l.ShipmentIDs)
		slices.Sort(l.EntryKeys)
		out = append(out, *l)
	}
	slices.SortFunc(out, func(a, b QuantityLine) int {
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
