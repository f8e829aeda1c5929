package service

import (
	"context"
	"fmt"
	"slices"
	"strings"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
)

// How recorded shipments and national entries become controls.Flows.
//
// Shipments (one total per year, component, direction, purpose, condition and partner
// status, summed in SQL):
//   - transit, any purpose: Transit (never counted).
//   - import of used, recycled or reclaimed material: UsedImports (not counted, except in an
//     Article 5 Party's base years; Decision IV/24 [V]).
//   - other imports: Imports, and also
//     feedstock → Feedstock (Art. 1 para 5; Decision VII/30),
//     process-agent → Feedstock too: the Secretariat's working formula deducts feedstock and
//     process-agent uses together (Decision X/14 sets the conditions a
//     note reminds of),
//     qps → QPS, for methyl bromide (Annex E) only; another substance declared for QPS
//     counts as an ordinary import, with a note.
//     destruction → Destruction: an import for destruction by an approved technology is
//     deducted through its declared purpose (Art. 1 para 5).
//   - export or re-export of used, recycled or reclaimed material: UsedExports.
//   - other exports and re-exports, whatever their purpose: to a Party not bound for the
//     component's group, from 1993 on, ExportsNonParty (not deducted, Art. 3 para 1(c));
//     otherwise Exports (deducted, feedstock exports included, Decision VII/30).
//
// National entries: production → Production, destruction → Destruction, feedstock →
// Feedstock, qps → QPS, historical-import → Imports, historical-export → Exports,
// historical-export-non-party → ExportsNonParty (Exports before 1993).
//
// One source per quantity: feedstock, QPS and destruction are deducted from the shipments
// by their declared purpose. A national entry of those kinds marked outside customs adds
// what never passed customs (domestic production used as feedstock, stocks destroyed). An
// unmarked one is a whole year's use: refused when it is recorded for a substance and year
// with shipments declared for the same use, and left out with a note when such shipments
// are recorded after it, so the same use is never deducted twice.
//
// Data coverage: controls tells a year without data from a year of zero consumption by
// whether any record of the group exists. A group has data in a year when a shipment of
// one of its substances is recorded or a national entry of one is stored; a 0 t entry
// states a true zero. A recorded shipment of another group says nothing about this one.

// nonPartyExportsFrom is the first year in which exports to non-Parties are not deducted
// (Art. 3 para 1(c) [V]).
const nonPartyExportsFrom = 1993

// consumptionData is what the arithmetic reads from the database for a set of years.
type consumptionData struct {
	records  []controls.Record // every record comes from the database (nStored = len(records))
	nStored  int
	notes    []string
	covered  map[int]bool // years with recorded shipments
	anyYears map[int]bool // years with any shipment or national entry
}

func recovered(condition string) bool {
	return condition == "used" || condition == "recycled" || condition == "reclaimed"
}

// shipmentFlows classifies one shipment total. note is set when the classification is
// worth telling the reader.
func shipmentFlows(t store.ShipmentTotal, g substances.Group) (f controls.Flows, note string, err error) {
	m := t.Tonnes
	switch t.Direction {
	case "transit":
		f.Transit = m
	case "import":
		if recovered(t.Condition) {
			f.UsedImports = m
			break
		}
		f.Imports = m
		switch t.Purpose {
		case "feedstock":
			f.Feedstock = m
		case "process-agent":
			f.Feedstock = m
			note = fmt.Sprintf("%d: %s t of %s imported as process agent deducted with feedstock (Ozone Secretariat's data-reporting formula); Decision X/14 excludes only qualifying uses in plants operating before 1999",
				t.Year, fmtT(m), t.Designation)
		case "destruction":
			f.Destruction = m
		case "qps":
			if g == substances.GroupEI {
				f.QPS = m
			} else {
				note = fmt.Sprintf("%d: %s t of %s declared for QPS counted as an ordinary import: the QPS exclusion covers methyl bromide only",
					t.Year, fmtT(m), t.Designation)
			}
		}
	case "export", "re-export":
		switch {
		case recovered(t.Condition):
			f.UsedExports = m
		case t.PartnerNonParty && t.Year >= nonPartyExportsFrom:
			f.ExportsNonParty = m
		default:
			f.Exports = m
		}
	default:
		return f, "", fmt.Errorf("recorded shipments of %s in %d have direction %q, which the consumption arithmetic does not know", t.Designation, t.Year, t.Direction)
	}
	return f, note, nil
}

// deductedUse reports whether a national entry kind is one of the uses deducted from
// consumption that shipments also declare (feedstock, QPS, destruction).
func deductedUse(entryType string) bool {
	return entryType == store.EntryFeedstock || entryType == store.EntryQPS || entryType == store.EntryDestruction
}

// shipmentUse is the national entry kind of the use a shipment total deducts through its
// declared purpose, or "" when it deducts none: imports of new substance declared for
// feedstock or as process agent (feedstock), for destruction, or, for methyl bromide, for
// QPS.
func shipmentUse(t store.ShipmentTotal, g substances.Group) string {
	if t.Direction != "import" || recovered(t.Condition) {
		return ""
	}
	switch t.Purpose {
	case "feedstock", "process-agent":
		return store.EntryFeedstock
	case "destruction":
		return store.EntryDestruction
	case "qps":
		if g == substances.GroupEI {
			return store.EntryQPS
		}
	}
	return ""
}

// useKey names one use of one substance in one year.
type useKey struct {
	year      int
	substance string
	use       string
}

// declaredUses lists the uses the shipment totals deduct, with the tonnes declared.
func declaredUses(cat *substances.Catalogue, ships []store.ShipmentTotal) map[useKey]float64 {
	out := map[useKey]float64{}
	for _, t := range ships {
		sub, ok := cat.Substance(t.Designation)
		if !ok {
			continue
		}
		if u := shipmentUse(t, sub.Group); u != "" {
			out[useKey{t.Year, sub.Designation, u}] += t.Tonnes
		}
	}
	return out
}

// doubleCountViolations refuses whole-year entries (not outside customs) of a use that
// recorded shipments of the same substance and year already deduct.
func (s *Server) doubleCountViolations(ctx context.Context, entries []store.NationalEntry) ([]fieldViolation, error) {
	var years []int
	for _, e := range entries {
		if deductedUse(e.Type) && !e.OutsideCustoms && !slices.Contains(years, e.Year) {
			years = append(years, e.Year)
		}
	}
	if len(years) == 0 {
		return nil, nil
	}
	ships, err := s.store.ShipmentTotals(ctx, years)
	if err != nil {
		return nil, err
	}
	uses := declaredUses(s.cat.Load(), ships)
	var vs []fieldViolation
	for i, e := range entries {
		if !deductedUse(e.Type) || e.OutsideCustoms {
			continue
		}
		if t, ok := uses[useKey{e.Year, e.Substance, e.Type}]; ok {
			vs = append(vs, fieldViolation{fmt.Sprintf("entries[%d].outside_customs", i), fmt.Sprintf(
				"is false, but %s t of %s recorded as imports for %s in %d are deducted already through their declared purpose; the entry would count the same use twice: enter only the quantity that never passed customs (e.g. domestic production used as feedstock, stocks destroyed) and set outside_customs",
				fmtT(t), e.Substance, e.Type, e.Year)})
		}
	}
	return vs, nil
}

// entryFlows classifies one national total.
func entryFlows(t store.NationalTotal) (controls.Flows, error) {
	var f controls.Flows
	m := t.Tonnes
	switch t.Type {
	case store.EntryProduction:
		f.Production = m
	case store.EntryDestruction:
		f.Destruction = m
	case store.EntryFeedstock:
		f.Feedstock = m
	case store.EntryQPS:
		f.QPS = m
	case store.EntryHistoricalImport:
		f.Imports = m
	case store.EntryHistoricalExport:
		f.Exports = m
	case store.EntryHistoricalExportNonParty:
		if t.Year >= nonPartyExportsFrom {
			f.ExportsNonParty = m
		} else {
			f.Exports = m
		}
	default:
		return f, fmt.Errorf("national entries of %s in %d have kind %q, which the consumption arithmetic does not know", t.Substance, t.Year, t.Type)
	}
	return f, nil
}

// fmtT prints tonnes for notes: up to 6 decimals, trailing zeros dropped.
func fmtT(v float64) string {
	s := strings.TrimRight(strings.TrimRight(fmt.Sprintf("%.6f", v), "0"), ".")
	if s == "-0" {
		return "0"
	}
	return s
}

// loadConsumption reads shipment and national totals for the years (every year when
// years is nil) and turns them into controls records with the current catalogue's ODPs and
// Protocol GWPs.
func (s *Server) loadConsumption(ctx context.Context, years []int) (consumptionData, error) {
	cat := s.cat.Load()
	d := consumptionData{covered: map[int]bool{}, anyYears: map[int]bool{}}
	ships, err := s.store.ShipmentTotals(ctx, years)
	if err != nil {
		return d, err
	}
	nats, err := s.store.NationalTotals(ctx, years)
	if err != nil {
		return d, err
	}
	shipYears, err := s.store.ShipmentYears(ctx)
	if err != nil {
		return d, err
	}
	wanted := func(y int) bool { return years == nil || slices.Contains(years, y) }
	for _, y := range shipYears {
		if wanted(y) {
			d.covered[y] = true
		}
	}

	noteSet := map[string]bool{}
	addNote := func(n string) {
		if n != "" && !noteSet[n] {
			noteSet[n] = true
			d.notes = append(d.notes, n)
		}
	}
	subOf := func(designation, recordedGroup string, year int) (controls.Substance, bool, error) {
		sub, ok := cat.Substance(designation)
		if !ok {
			if recordedGroup == "" {
				return controls.Substance{}, false, nil // uncontrolled component no longer catalogued
			}
			return controls.Substance{}, false, status.Errorf(codes.FailedPrecondition,
				"%d: data of %s (group %s) are stored, but the catalogue has no such substance now; restore it in the catalogue (UpsertSubstance) to compute consumption",
				year, designation, recordedGroup)
		}
		if recordedGroup != string(sub.Group) {
			addNote(fmt.Sprintf("%s was recorded in group %q and is in group %q in the catalogue now; the catalogue's group, ODP and GWP are used",
				sub.Designation, recordedGroup, sub.Group))
		}
		if year < controls.MinYear || year > controls.MaxYear {
			addNote(fmt.Sprintf("data of %d left out: years from %d to %d are computed", year, controls.MinYear, controls.MaxYear))
			return controls.Substance{}, false, nil
		}
		return controls.SubstanceOf(sub), true, nil
	}

	histImports := map[int][]string{}
	for _, t := range ships {
		d.anyYears[t.Year] = true
		cs, ok, err := subOf(t.Designation, t.AnnexGroup, t.Year)
		if err != nil {
			return d, err
		}
		if !ok {
			continue
		}
		f, note, err := shipmentFlows(t, cs.Group)
		if err != nil {
			return d, err
		}
		addNote(note)
		d.records = append(d.records, controls.Record{Year: t.Year, Substance: cs, Flows: f})
	}
	uses := declaredUses(cat, ships)
	for _, t := range nats {
		d.anyYears[t.Year] = true
		if t.Type == store.EntryDestruction && t.Substance == hfc23Designation {
			// Refused since migration 9; one stored before is counted and flagged.
			addNote(fmt.Sprintf("check: %d: destruction entries of HFC-23 (%s, %s t) deduct from Annex F consumption; HFC-23 by-product destroyed at a plant is not a deduction (Art. 2J paras 6-7; Art. 3 para 1(d)): if it is by-product, record it as an HFC-23 facility entry and remove these entries",
				t.Year, strings.Join(t.Keys, ", "), fmtT(t.Tonnes)))
		}
		if deductedUse(t.Type) && !t.OutsideCustoms {
			if shipped, ok := uses[useKey{t.Year, t.Substance, t.Type}]; ok {
				addNote(fmt.Sprintf("%d: national %s entries of %s (%s, %s t) left out: shipments declared for %s (%s t) are deducted already, and the entries are not marked outside customs; if they cover only quantities that never passed customs, store them again with outside_customs",
					t.Year, t.Type, t.Substance, strings.Join(t.Keys, ", "), fmtT(t.Tonnes), t.Type, fmtT(shipped)))
				continue
			}
		}
		sub, ok := cat.Substance(t.Substance)
		if !ok {
			return d, status.Errorf(codes.FailedPrecondition,
				"%d: national entries of %s are stored, but the catalogue has no such substance now; restore it in the catalogue to compute consumption",
				t.Year, t.Substance)
		}
		cs, ok, err := subOf(t.Substance, string(sub.Group), t.Year)
		if err != nil {
			return d, err
		}
		if !ok {
			continue
		}
		f, err := entryFlows(t)
		if err != nil {
			return d, err
		}
		if f.QPS > 0 && cs.Group != substances.GroupEI {
			return d, status.Errorf(codes.FailedPrecondition, "%d: a QPS entry of %s is stored, but QPS applies to methyl bromide only; correct the entry", t.Year, t.Substance)
		}
		if d.covered[t.Year] && (t.Type == store.EntryHistoricalImport || t.Type == store.EntryHistoricalExport || t.Type == store.EntryHistoricalExportNonParty) {
			histImports[t.Year] = append(histImports[t.Year], t.Substance)
		}
		d.records = append(d.records, controls.Record{Year: t.Year, Substance: cs, Flows: f})
	}
	for y, subs := range histImports {
		slices.Sort(subs)
		addNote(fmt.Sprintf("%d has recorded shipments and also historical trade totals (%s): both are counted; historical totals are meant for years before the service was in use",
			y, strings.Join(slices.Compact(subs), ", ")))
	}

	d.nStored = len(d.records)
	return d, nil
}

// yearRange lists from..to.
func yearRange(from, to int) []int {
	var ys []int
	for y := from; y <= to; y++ {
		ys = append(ys, y)
	}
	return ys
}

// baselineYears lists the years a scope's baseline reads: its base years, and for an HFC
// baseline the HCFC baseline's base years too (the CFC term of a non-A5 HCFC baseline
// uses the same years as the HCFC part).
func baselineYears(rb *controls.Rulebook, party controls.Party, scope controls.Scope) []int {
	var ys []int
	rule, err := rb.BaselineRule(party, scope)
	if err != nil {
		return nil
	}
	ys = append(ys, yearRange(rule.FromYear, rule.ToYear)...)
	if rule.Term == controls.TermHCFCCO2e {
		if hr, err := rb.BaselineRule(controls.Party{Type: party.Type}, controls.ScopeCI); err == nil {
			ys = append(ys, yearRange(hr.FromYear, hr.ToYear)...)
		}
	}
	return ys
}

// uniqueYears sorts and de-duplicates.
func uniqueYears(ys []int) []int {
	ys = slices.Clone(ys)
	slices.Sort(ys)
	return slices.Compact(ys)
}

// coverageNotes names substances that have data in some of the years but not in others,
// within the scope's groups: a likely gap in historical data even where the group has
// records. Each note lists the years lacking the substance. records are the stored ones
// only (a 0 t entry is data; the zero records of covered years are not).
func coverageNotes(records []controls.Record, scope controls.Scope, years []int) []string {
	groups := scope.Groups()
	bySub := map[string]map[int]bool{}
	groupYears := map[int]bool{}
	for _, r := range records {
		if !slices.Contains(groups, r.Substance.Group) || !slices.Contains(years, r.Year) {
			continue
		}
		groupYears[r.Year] = true
		if bySub[r.Substance.Designation] == nil {
			bySub[r.Substance.Designation] = map[int]bool{}
		}
		bySub[r.Substance.Designation][r.Year] = true
	}
	var names []string
	for n := range bySub {
		names = append(names, n)
	}
	slices.Sort(names)
	var notes []string
	for _, n := range names {
		var lack []string
		for _, y := range years {
			if groupYears[y] && !bySub[n][y] {
				lack = append(lack, fmt.Sprint(y))
			}
		}
		if len(lack) > 0 {
			notes = append(notes, fmt.Sprintf("check: %s has data in other base years but none in %s; if there was none, enter 0 t so the gap is not a doubt",
				n, strings.Join(lack, ", ")))
		}
	}
	return notes
}

// gapText names a missing base year and the substances to enter for it: those of the
// gap's scope that have data in the other base years (years).
func gapText(g controls.Gap, records []controls.Record, years []int) string {
	groups := g.Scope.Groups()
	seen := map[string]bool{}
	var names []string
	for _, r := range records {
		if slices.Contains(groups, r.Substance.Group) && slices.Contains(years, r.Year) && !seen[r.Substance.Designation] {
			seen[r.Substance.Designation] = true
			names = append(names, r.Substance.Designation)
		}
	}
	slices.Sort(names)
	s := g.String()
	if len(names) > 0 {
		return s + fmt.Sprintf("; other base years have data for %s: enter their %d totals (0 t where there was none)", strings.Join(names, ", "), g.Year)
	}
	return s + fmt.Sprintf("; enter the %d totals per substance as national entries (historical imports and exports, production)", g.Year)
}
