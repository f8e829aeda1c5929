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
//     An import for destruction counts as an import: the destruction itself is deducted
//     through a DESTRUCTION national entry in the year it happens (Art. 1 para 5), so that
//     it is never deducted twice.
//   - export or re-export of used, recycled or reclaimed material: UsedExports.
//   - other exports and re-exports: to a non-Party from 1993 on, ExportsNonParty (not
//     deducted, Art. 3 para 1(c)); otherwise Exports (deducted, feedstock exports included,
//     Decision VII/30).
//
// National entries: production → Production, destruction → Destruction, feedstock →
// Feedstock, qps → QPS, historical-import → Imports, historical-export → Exports,
// historical-export-non-party → ExportsNonParty (Exports before 1993).
//
// Data coverage: controls tells a year without data from a year of zero consumption by
// whether any record of the group exists. A year in which the service recorded at least
// one shipment counts as covered for every group (the service was in use, so a group
// without trade had none); such years get a zero record for each group that has no other.
// Other years (historical ones) have data only for groups with national entries: a 0 t
// entry states a true zero.

// nonPartyExportsFrom is the first year in which exports to non-Parties are not deducted
// (Art. 3 para 1(c) [V]).
const nonPartyExportsFrom = 1993

// consumptionData is what the arithmetic reads from the database for a set of years.
type consumptionData struct {
	records  []controls.Record // the first nStored come from the database, the rest are zero records of covered years
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
	for _, t := range nats {
		d.anyYears[t.Year] = true
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

	// Zero records for covered years, so that no trade reads as zero, not as missing data.
	d.nStored = len(d.records)
	rep := representatives(cat)
	has := map[int]map[substances.Group]bool{}
	for _, r := range d.records {
		if has[r.Year] == nil {
			has[r.Year] = map[substances.Group]bool{}
		}
		has[r.Year][r.Substance.Group] = true
	}
	for y := range d.covered {
		if y < controls.MinYear || y > controls.MaxYear {
			continue
		}
		for _, g := range substances.AllGroups {
			if has[y][g] {
				continue
			}
			if sub, ok := rep[g]; ok {
				d.records = append(d.records, controls.Record{Year: y, Substance: sub})
			}
		}
	}
	return d, nil
}

// representatives picks one catalogue substance per group to carry a zero record.
func representatives(cat *substances.Catalogue) map[substances.Group]controls.Substance {
	out := map[substances.Group]controls.Substance{}
	for _, s := range cat.Substances() {
		if s.Group == substances.GroupNone {
			continue
		}
		if _, ok := out[s.Group]; !ok {
			out[s.Group] = controls.SubstanceOf(s)
		}
	}
	return out
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
