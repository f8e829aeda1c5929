package controls

import (
	"errors"
	"fmt"
	"slices"
	"strings"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// How recorded shipments and national entries become Flows.
//
// Shipments (one total per year, component, direction, purpose, condition and partner
// status):
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
// Data coverage: a year without data differs from a year of zero consumption by whether
// any record of the group exists. A group has data in a year when a shipment of one of its
// substances is recorded or a national entry of one is stored; a 0 t entry states a true
// zero. A recorded shipment of another group says nothing about this one.

// NonPartyExportsFrom is the first year in which exports to non-Parties are not deducted
// (Art. 3 para 1(c) [V]).
const NonPartyExportsFrom = 1993

// Kinds of national entries (the register stores the same words).
const (
	EntryProduction               = "production"                  // produced in the reporting Party
	EntryDestruction              = "destruction"                 // destroyed by an approved technology
	EntryFeedstock                = "feedstock"                   // used entirely as feedstock
	EntryQPS                      = "qps"                         // methyl bromide used for QPS
	EntryHistoricalImport         = "historical-import"           // imports before the register was in use
	EntryHistoricalExport         = "historical-export"           // exports to Parties, idem
	EntryHistoricalExportNonParty = "historical-export-non-party" // exports to non-Parties, idem
)

// HFC23 is the designation of the Annex F Group II substance.
const HFC23 = "HFC-23"

// ErrStoredData marks recorded data the arithmetic cannot use as they stand (a substance
// the catalogue no longer has, a kind or direction it does not know): a problem of the
// register, not of the question asked.
var ErrStoredData = errors.New("controls: stored data cannot be computed")

// StoredDataError says what in the recorded data cannot be computed and how to repair it.
type StoredDataError struct{ Msg string }

func (e *StoredDataError) Error() string { return e.Msg }

// Unwrap makes errors.Is(err, ErrStoredData) true.
func (e *StoredDataError) Unwrap() error { return ErrStoredData }

func storedErr(format string, args ...any) error {
	return &StoredDataError{Msg: fmt.Sprintf(format, args...)}
}

// ShipmentTotal is the mass of one substance (a shipment's single substance or one blend
// component) in the recorded shipments of one year that share direction, purpose,
// condition and partner status.
type ShipmentTotal struct {
	Year            int
	Designation     string // component designation
	AnnexGroup      string // group recorded with the component ("" when uncontrolled)
	Direction       terms.Direction
	Purpose         terms.Purpose
	Condition       terms.Condition
	PartnerNonParty bool          // the partner was not bound for this component's group
	Tonnes          exact.Decimal // metric tonnes, exact
}

// NationalTotal is the sum of the national entries of one kind, substance, year and
// outside-customs mark.
type NationalTotal struct {
	Year           int
	Kind           string // one of the Entry constants
	Substance      string
	Tonnes         exact.Decimal
	OutsideCustoms bool
	Keys           []string // keys of the entries summed
}

// Recovered reports whether a condition is used, recycled or reclaimed material.
func Recovered(condition terms.Condition) bool {
	return condition == terms.ConditionUsed || condition == terms.ConditionRecycled || condition == terms.ConditionReclaimed
}

// ClassifyShipment classifies one shipment total of a substance of group g. note is set
// when the classification is worth telling the reader.
func ClassifyShipment(t ShipmentTotal, g substances.Group) (f Flows, note string, err error) {
	m := t.Tonnes
	switch t.Direction {
	case terms.DirectionTransit:
		f.Transit = m
	case terms.DirectionImport:
		if Recovered(t.Condition) {
			f.UsedImports = m
			break
		}
		f.Imports = m
		switch t.Purpose {
		case terms.PurposeFeedstock:
			f.Feedstock = m
		case terms.PurposeProcessAgent:
			f.Feedstock = m
			note = fmt.Sprintf("%d: %s t of %s imported as process agent deducted with feedstock (Ozone Secretariat's data-reporting formula); Decision X/14 excludes only qualifying uses in plants operating before 1999",
				t.Year, FormatTonnes(m), t.Designation)
		case terms.PurposeDestruction:
			f.Destruction = m
		case terms.PurposeQPS:
			if g == substances.GroupEI {
				f.QPS = m
			} else {
				note = fmt.Sprintf("%d: %s t of %s declared for QPS counted as an ordinary import: the QPS exclusion covers methyl bromide only",
					t.Year, FormatTonnes(m), t.Designation)
			}
		}
	case terms.DirectionExport, terms.DirectionReExport:
		switch {
		case Recovered(t.Condition):
			f.UsedExports = m
		case t.PartnerNonParty && t.Year >= NonPartyExportsFrom:
			f.ExportsNonParty = m
		default:
			f.Exports = m
		}
	default:
		return f, "", storedErr("recorded shipments of %s in %d have direction %q, which the consumption arithmetic does not know", t.Designation, t.Year, t.Direction)
	}
	return f, note, nil
}

// ClassifyEntry classifies one national total.
func ClassifyEntry(t NationalTotal) (Flows, error) {
	var f Flows
	m := t.Tonnes
	switch t.Kind {
	case EntryProduction:
		f.Production = m
	case EntryDestruction:
		f.Destruction = m
	case EntryFeedstock:
		f.Feedstock = m
	case EntryQPS:
		f.QPS = m
	case EntryHistoricalImport:
		f.Imports = m
	case EntryHistoricalExport:
		f.Exports = m
	case EntryHistoricalExportNonParty:
		if t.Year >= NonPartyExportsFrom {
			f.ExportsNonParty = m
		} else {
			f.Exports = m
		}
	default:
		return f, storedErr("national entries of %s in %d have kind %q, which the consumption arithmetic does not know", t.Substance, t.Year, t.Kind)
	}
	return f, nil
}

// DeductedUse reports whether a national entry kind is one of the uses deducted from
// consumption that shipments also declare (feedstock, QPS, destruction).
func DeductedUse(kind string) bool {
	return kind == EntryFeedstock || kind == EntryQPS || kind == EntryDestruction
}

// ShipmentUse is the national entry kind of the use shipments of a substance of group g
// deduct through their declared purpose, or "" when they deduct none: imports of new
// substance declared for feedstock or as process agent (feedstock), for destruction, or,
// for methyl bromide, for QPS.
func ShipmentUse(direction terms.Direction, purpose terms.Purpose, condition terms.Condition, g substances.Group) string {
	if direction != terms.DirectionImport || Recovered(condition) {
		return ""
	}
	switch purpose {
	case terms.PurposeFeedstock, terms.PurposeProcessAgent:
		return EntryFeedstock
	case terms.PurposeDestruction:
		return EntryDestruction
	case terms.PurposeQPS:
		if g == substances.GroupEI {
			return EntryQPS
		}
	}
	return ""
}

// UseKey names one use of one substance in one year.
type UseKey struct {
	Year      int
	Substance string
	Use       string // an Entry constant
}

// DeclaredUses lists the uses the shipment totals deduct, with the tonnes declared.
func DeclaredUses(cat *substances.Catalogue, ships []ShipmentTotal) map[UseKey]exact.Decimal {
	out := map[UseKey]exact.Decimal{}
	for _, t := range ships {
		sub, ok := cat.Substance(t.Designation)
		if !ok {
			continue
		}
		if u := ShipmentUse(t.Direction, t.Purpose, t.Condition, sub.Group); u != "" {
			k := UseKey{t.Year, sub.Designation, u}
			out[k] = out[k].Add(t.Tonnes)
		}
	}
	return out
}

// Recorded is the register's data for a set of years turned into records.
type Recorded struct {
	Records  []Record     // one per stored total that counts
	Notes    []string     // what the reader should know about the classification
	Covered  map[int]bool // years with recorded shipments
	AnyYears map[int]bool // years with any shipment or national entry
}

// ClassifyRecorded turns the shipment and national totals of the years (every year when
// years is nil) into records with cat's ODPs and Protocol GWPs. shipYears are the years
// with any recorded shipment. A total of a substance cat lacks, or of a kind or direction
// the arithmetic does not know, is a *StoredDataError.
func ClassifyRecorded(cat *substances.Catalogue, years []int, ships []ShipmentTotal, nats []NationalTotal, shipYears []int) (Recorded, error) {
	d := Recorded{Covered: map[int]bool{}, AnyYears: map[int]bool{}}
	wanted := func(y int) bool { return years == nil || slices.Contains(years, y) }
	for _, y := range shipYears {
		if wanted(y) {
			d.Covered[y] = true
		}
	}
	noteSet := map[string]bool{}
	addNote := func(n string) {
		if n != "" && !noteSet[n] {
			noteSet[n] = true
			d.Notes = append(d.Notes, n)
		}
	}
	subOf := func(designation, recordedGroup string, year int) (Substance, bool, error) {
		sub, ok := cat.Substance(designation)
		if !ok {
			if recordedGroup == "" {
				return Substance{}, false, nil // uncontrolled component no longer catalogued
			}
			return Substance{}, false, storedErr(
				"%d: data of %s (group %s) are stored, but the catalogue has no such substance now; restore it in the catalogue (UpsertSubstance) to compute consumption",
				year, designation, recordedGroup)
		}
		if recordedGroup != string(sub.Group) {
			addNote(fmt.Sprintf("%s was recorded in group %q and is in group %q in the catalogue now; the catalogue's group, ODP and GWP are used",
				sub.Designation, recordedGroup, sub.Group))
		}
		if year < MinYear || year > MaxYear {
			addNote(fmt.Sprintf("data of %d left out: years from %d to %d are computed", year, MinYear, MaxYear))
			return Substance{}, false, nil
		}
		return SubstanceOf(sub), true, nil
	}

	histTrade := map[int][]string{}
	for _, t := range ships {
		d.AnyYears[t.Year] = true
		cs, ok, err := subOf(t.Designation, t.AnnexGroup, t.Year)
		if err != nil {
			return d, err
		}
		if !ok {
			continue
		}
		f, note, err := ClassifyShipment(t, cs.Group)
		if err != nil {
			return d, err
		}
		addNote(note)
		d.Records = append(d.Records, Record{Year: t.Year, Substance: cs, Flows: f})
	}
	uses := DeclaredUses(cat, ships)
	for _, t := range nats {
		d.AnyYears[t.Year] = true
		if t.Kind == EntryDestruction && t.Substance == HFC23 {
			// Refused when recorded; one stored before that rule is counted and flagged.
			addNote(fmt.Sprintf("check: %d: destruction entries of HFC-23 (%s, %s t) deduct from Annex F consumption; HFC-23 by-product destroyed at a plant is not a deduction (Art. 2J paras 6-7; Art. 3 para 1(d)): if it is by-product, record it as an HFC-23 facility entry and remove these entries",
				t.Year, strings.Join(t.Keys, ", "), FormatTonnes(t.Tonnes)))
		}
		if DeductedUse(t.Kind) && !t.OutsideCustoms {
			if shipped, ok := uses[UseKey{t.Year, t.Substance, t.Kind}]; ok {
				addNote(fmt.Sprintf("%d: national %s entries of %s (%s, %s t) left out: shipments declared for %s (%s t) are deducted already, and the entries are not marked outside customs; if they cover only quantities that never passed customs, store them again with outside_customs",
					t.Year, t.Kind, t.Substance, strings.Join(t.Keys, ", "), FormatTonnes(t.Tonnes), t.Kind, FormatTonnes(shipped)))
				continue
			}
		}
		sub, ok := cat.Substance(t.Substance)
		if !ok {
			return d, storedErr(
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
		f, err := ClassifyEntry(t)
		if err != nil {
			return d, err
		}
		if f.QPS.Sign() > 0 && cs.Group != substances.GroupEI {
			return d, storedErr("%d: a QPS entry of %s is stored, but QPS applies to methyl bromide only; correct the entry", t.Year, t.Substance)
		}
		if d.Covered[t.Year] && (t.Kind == EntryHistoricalImport || t.Kind == EntryHistoricalExport || t.Kind == EntryHistoricalExportNonParty) {
			histTrade[t.Year] = append(histTrade[t.Year], t.Substance)
		}
		d.Records = append(d.Records, Record{Year: t.Year, Substance: cs, Flows: f})
	}
	hy := make([]int, 0, len(histTrade))
	for y := range histTrade {
		hy = append(hy, y)
	}
	slices.Sort(hy)
	for _, y := range hy {
		subs := histTrade[y]
		slices.Sort(subs)
		addNote(fmt.Sprintf("%d has recorded shipments and also historical trade totals (%s): both are counted; historical totals are meant for years before the service was in use",
			y, strings.Join(slices.Compact(subs), ", ")))
	}
	return d, nil
}

// CoverageNotes names substances that have data in some of the years but not in others,
// within the scope's groups: a likely gap in historical data even where the group has
// records. Each note lists the years lacking the substance. records are the stored ones
// only (a 0 t entry is data; zero records added for covered years are not).
func CoverageNotes(records []Record, scope Scope, years []int) []string {
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

// GapText names a missing base year and the substances to enter for it: those of the
// gap's scope that have data in the other base years (years).
func GapText(g Gap, records []Record, years []int) string {
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

// FormatExact prints a figure for notes as FormatTonnes does: up to 6 decimals, trailing
// zeros dropped.
func FormatExact(v exact.Decimal) string { return v.Round(6).String() }

// FormatTonnes prints tonnes for notes: up to 6 decimals, trailing zeros dropped (the
// same as FormatExact).
func FormatTonnes(v exact.Decimal) string { return FormatExact(v) }
