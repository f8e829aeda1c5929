package ledger

import (
	"context"
	"errors"
	"fmt"
	"regexp"
	"slices"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
)

// Figures the reporting Party records beside the shipments: national entries, authorised
// exemptions, official baselines and limits, HFC-23 facility entries and partners'
// export figures. Each call is validated whole (every bad field named, nothing stored
// when one is bad), then stored in one transaction by the register.

// NationalEntry is one quantity of one substance in one year that does not come from a
// recorded shipment.
type NationalEntry struct {
	Key            string
	Year           int
	Kind           string // one of the controls.Entry constants
	Substance      string
	Tonnes         exact.Decimal
	Note           string
	OutsideCustoms bool
}

// PartnerExport is what a partner reports as exported to the reporting Party.
type PartnerExport struct {
	Key       string
	Year      int
	Partner   string
	Substance string
	Tonnes    exact.Decimal
	Source    string
}

// ErrDuplicate: a figure for the same thing (Party, kind, scope and year; facility and
// year) is stored under another key.
var ErrDuplicate = errors.New("stored under another key")

// FigureWriter stores the figures, each call in one transaction. A figure stored under
// another key for the same thing fails with an error wrapping ErrDuplicate.
type FigureWriter interface {
	PutNationalEntries(ctx context.Context, es []NationalEntry) error
	PutExemptions(ctx context.Context, es []Exemption) error
	PutOfficialFigures(ctx context.Context, fs []OfficialFigure) error
	PutHFC23Entries(ctx context.Context, es []HFC23Entry) error
	PutPartnerExports(ctx context.Context, rs []PartnerExport) error
}

// Limits of one call and of its fields.
const (
	MaxEntriesPerCall = 10000 // national entries or partner reports per call
	MaxYearFigures    = 1000  // exemptions, official figures or HFC-23 entries per call
	maxKeyBytes       = 128
	maxNoteBytes      = 1000
	maxTonnes         = 1e9  // a billion tonnes: far above any national figure
	firstEntryYear    = 1986 // the earliest base year (Annex A, non-Article 5)
)

var countryCode = regexp.MustCompile(`^[A-Z]{2}$`)

func printable(s string) bool {
	if !utf8.ValidString(s) {
		return false
	}
	for _, r := range s {
		if !unicode.IsPrint(r) {
			return false
		}
	}
	return true
}

// batch collects the violations of one call and checks what every kind of figure shares:
// a key of the caller's, unique in the call; a year; a note.
type batch struct {
	vs   []FieldViolation
	seen map[string]int
	list string // the request's list field, e.g. "entries"
	// reporting is the reporting Party's code once read (an empty country stands for it).
	reporting *string
}

func newBatch(list string, n, max int, what string) (*batch, error) {
	if n == 0 || n > max {
		return nil, invalid(FieldViolation{list, fmt.Sprintf("holds %d %s; give 1 to %d", n, what, max)})
	}
	return &batch{seen: map[string]int{}, list: list}, nil
}

func (b *batch) add(v *FieldViolation) {
	if v != nil {
		b.vs = append(b.vs, *v)
	}
}

func (b *batch) addf(field, format string, args ...any) {
	b.vs = append(b.vs, FieldViolation{field, fmt.Sprintf(format, args...)})
}

// key checks the key of item i (field f) and that no other item of the call has it.
func (b *batch) key(i int, f, key, example string) string {
	key = strings.TrimSpace(key)
	switch {
	case key == "":
		b.addf(f, "must not be empty; give it a key of your own, e.g. %s", example)
	case len(key) > maxKeyBytes || !printable(key):
		b.addf(f, "must be printable text of at most %d bytes", maxKeyBytes)
	default:
		if j, dup := b.seen[key]; dup {
			b.addf(f, "%q is also the key of %s[%d]; each key once per call", key, b.list, j)
		} else {
			b.seen[key] = i
		}
	}
	return key
}

func (b *batch) note(f, note string) string {
	note = strings.TrimSpace(note)
	if len(note) > maxNoteBytes || !printable(note) {
		b.addf(f, "must be printable text of at most %d bytes", maxNoteBytes)
	}
	return note
}

func (b *batch) source(f, src string) string {
	src = strings.TrimSpace(src)
	if src == "" || len(src) > maxNoteBytes || !printable(src) {
		b.addf(f, "must name the decision or document that sets the figure (printable text of 1 to %d bytes), e.g. the Meeting of the Parties' decision number", maxNoteBytes)
	}
	return src
}

func (b *batch) tonnes(f string, v exact.Decimal) {
	if !inRange(v, exact.FromInt(maxTonnes)) {
		b.addf(f, "is %v; accepted: metric tonnes from 0 to %d, with at most 9 decimals", v, int64(maxTonnes))
	}
}

// inRange reports 0 ≤ v ≤ max with at most 9 decimals: the register keeps figures in
// numeric(30, 9) columns, which would round a tenth decimal away without a word.
func inRange(v, max exact.Decimal) bool {
	return v.Sign() >= 0 && v.Cmp(max) <= 0 && v.Round(9).Equal(v)
}

func (b *batch) err() error { return invalid(b.vs...) }

func amountOK(v exact.Decimal) bool { return inRange(v, exact.FromInt(maxTonnes*1e6)) }

func scopeField(f, v string) (controls.Scope, *FieldViolation) {
	sc, err := controls.ParseScope(strings.TrimSpace(v))
	if err != nil || strings.TrimSpace(v) == "" {
		return "", &FieldViolation{f, fmt.Sprintf("%q is not a control scope; accepted: A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I or F (Annex F as a whole)", v)}
	}
	return sc, nil
}

// Figures holds the workflows that record the reporting Party's own figures.
type Figures struct {
	cons *Consumption
	w    FigureWriter
}

// NewFigures returns the recording workflows; cons gives the catalogue and the register's
// reads (the reporting Party, the shipments a national entry must not double).
func NewFigures(cons *Consumption, w FigureWriter) *Figures { return &Figures{cons: cons, w: w} }

// country returns the country code given, or the reporting Party's when cc is empty.
func (x *Figures) country(ctx context.Context, b *batch, f, cc string) (string, error) {
	cc = strings.ToUpper(strings.TrimSpace(cc))
	if cc != "" {
		if !countryCode.MatchString(cc) {
			b.addf(f, "%q is not an ISO 3166-1 alpha-2 code; accepted: two capital letters, or empty for the reporting Party", cc)
		}
		return cc, nil
	}
	if b.reporting != nil {
		return *b.reporting, nil
	}
	var p Party
	err := x.cons.reports.Snapshot(ctx, func(r ReportReader) error {
		var err error
		p, _, err = reportingParty(ctx, r)
		return err
	})
	if err == nil {
		b.reporting = &p.Code
	}
	return p.Code, err
}

// RecordNationalEntries validates and stores national entries. A whole-year entry of a
// use the recorded shipments of the same substance and year deduct already is refused:
// it would count that use twice.
func (x *Figures) RecordNationalEntries(ctx context.Context, in []NationalEntry) ([]NationalEntry, error) {
	if len(in) == 0 {
		return nil, invalid(FieldViolation{"entries", "is empty; give at least one entry"})
	}
	if len(in) > MaxEntriesPerCall {
		return nil, invalid(FieldViolation{"entries", fmt.Sprintf("holds %d entries; at most %d per call", len(in), MaxEntriesPerCall)})
	}
	cat := x.cons.catalogue()
	b := &batch{seen: map[string]int{}, list: "entries"}
	out := make([]NationalEntry, len(in))
	for i, e := range in {
		out[i] = b.nationalEntry(i, e, cat)
	}
	if err := b.err(); err != nil {
		return nil, err
	}
	// A shipment recorded after the entry is caught when the year is computed: the entry
	// is then left out with a note.
	if err := x.doubleCounted(ctx, out); err != nil {
		return nil, err
	}
	return out, x.w.PutNationalEntries(ctx, out)
}

func (b *batch) nationalEntry(i int, e NationalEntry, cat *substances.Catalogue) NationalEntry {
	f := fmt.Sprintf("entries[%d]", i)
	out := NationalEntry{Year: e.Year, Kind: e.Kind, Note: strings.TrimSpace(e.Note), OutsideCustoms: e.OutsideCustoms, Tonnes: e.Tonnes}
	out.Key = strings.TrimSpace(e.Key)
	switch {
	case out.Key == "":
		b.addf(f+".entry_key", "must not be empty; give each entry a key of your own, e.g. PROD-2025-HCFC-22")
	case len(out.Key) > maxKeyBytes || !printable(out.Key):
		b.addf(f+".entry_key", "must be printable text of at most %d bytes", maxKeyBytes)
	}
	if out.Year < firstEntryYear || out.Year > controls.MaxYear {
		b.addf(f+".year", "is %d; accepted: a calendar year from %d to %d", out.Year, firstEntryYear, controls.MaxYear)
	}
	t := out.Kind
	if !slices.Contains([]string{controls.EntryProduction, controls.EntryDestruction, controls.EntryFeedstock, controls.EntryQPS,
		controls.EntryHistoricalImport, controls.EntryHistoricalExport, controls.EntryHistoricalExportNonParty}, t) {
		b.addf(f+".entry_type", "must be PRODUCTION, DESTRUCTION, FEEDSTOCK, QPS, HISTORICAL_IMPORT, HISTORICAL_EXPORT or HISTORICAL_EXPORT_NON_PARTY")
		t = ""
	}
	name := strings.TrimSpace(e.Substance)
	sub, found := cat.Substance(name)
	switch {
	case name == "":
		b.addf(f+".substance", "must not be empty; give a designation such as HCFC-22")
	case !found:
		if bl, isBlend := cat.Blend(name); isBlend {
			parts := make([]string, len(bl.Components))
			for k, c := range bl.Components {
				parts[k] = fmt.Sprintf("%s %g %%", c.Designation, c.MassPct)
			}
			b.addf(f+".substance", "%s is a blend; national entries are per substance: split it into one entry per controlled component by nominal mass (%s)",
				bl.Designation, strings.Join(parts, ", "))
			break
		}
		msg := fmt.Sprintf("%q is not a catalogue substance", name)
		if r := cat.Resolve(name); len(r.Suggestions) > 0 {
			msg += "; did you mean " + strings.Join(r.Suggestions, ", ") + "?"
		}
		b.add(&FieldViolation{f + ".substance", msg})
	case !sub.Group.Controlled():
		b.addf(f+".substance", "%s is not controlled by the Montreal Protocol; national entries are for substances of Annexes A to F", sub.Designation)
	default:
		out.Substance = sub.Designation
		if t == controls.EntryQPS && sub.Group != substances.GroupEI {
			b.addf(f+".entry_type", "QPS applies to methyl bromide (Annex E) only, not to %s", sub.Designation)
		}
	}
	if out.OutsideCustoms && t != "" && !controls.DeductedUse(t) && t != controls.EntryProduction {
		b.addf(f+".outside_customs", "must be false for historical trade totals (they passed customs); accepted: true only for production, destruction, feedstock and QPS entries")
	}
	if t == controls.EntryDestruction && out.Substance == controls.HFC23 {
		b.addf(f+".entry_type", "HFC-23 destroyed at a plant is by-product, not a deduction from consumption (Art. 2J paras 6-7; Art. 3 para 1(d)): record it as an HFC-23 facility entry (RecordHfc23Entries); HFC-23 imported for destruction is deducted through the shipment's declared purpose")
	}
	b.tonnes(f+".metric_tonnes", out.Tonnes)
	if len(out.Note) > maxNoteBytes || !printable(out.Note) {
		b.addf(f+".note", "must be printable text of at most %d bytes", maxNoteBytes)
	}
	if j, dup := b.seen[out.Key]; dup && out.Key != "" {
		b.addf(f+".entry_key", "%q is also the key of entries[%d]; each key once per call", out.Key, j)
	} else {
		b.seen[out.Key] = i
	}
	return out
}

// doubleCounted refuses whole-year entries (not outside customs) of a use that recorded
// shipments of the same substance and year already deduct.
func (x *Figures) doubleCounted(ctx context.Context, entries []NationalEntry) error {
	var years []int
	for _, e := range entries {
		if controls.DeductedUse(e.Kind) && !e.OutsideCustoms && !slices.Contains(years, e.Year) {
			years = append(years, e.Year)
		}
	}
	if len(years) == 0 {
		return nil
	}
	var ships []controls.ShipmentTotal
	err := x.cons.reports.Snapshot(ctx, func(r ReportReader) error {
		var err error
		ships, err = r.ShipmentTotals(ctx, years)
		return err
	})
	if err != nil {
		return err
	}
	uses := controls.DeclaredUses(x.cons.catalogue(), ships)
	var vs []FieldViolation
	for i, e := range entries {
		if !controls.DeductedUse(e.Kind) || e.OutsideCustoms {
			continue
		}
		if t, ok := uses[controls.UseKey{Year: e.Year, Substance: e.Substance, Use: e.Kind}]; ok {
			vs = append(vs, FieldViolation{fmt.Sprintf("entries[%d].outside_customs", i), fmt.Sprintf(
				"is false, but %s t of %s recorded as imports for %s in %d are deducted already through their declared purpose; the entry would count the same use twice: enter only the quantity that never passed customs (e.g. domestic production used as feedstock, stocks destroyed) and set outside_customs",
				controls.FormatTonnes(t), e.Substance, e.Kind, e.Year)})
		}
	}
	return invalid(vs...)
}

// RecordExemptions validates and stores authorised exemptions; an empty country is the
// reporting Party.
func (x *Figures) RecordExemptions(ctx context.Context, in []Exemption) ([]Exemption, error) {
	b, err := newBatch("exemptions", len(in), MaxYearFigures, "exemptions")
	if err != nil {
		return nil, err
	}
	out := make([]Exemption, 0, len(in))
	for i, e := range in {
		f := fmt.Sprintf("exemptions[%d]", i)
		se := Exemption{Key: b.key(i, f+".exemption_key", e.Key, "CUE-2025-MB"), Year: e.Year, Use: e.Use, Amount: e.Amount}
		if se.CountryCode, err = x.country(ctx, b, f+".country_code", e.CountryCode); err != nil {
			return nil, err
		}
		b.add(CheckQueryYear(f+".year", e.Year))
		sc, v := scopeField(f+".annex_group", e.Scope)
		b.add(v)
		se.Scope, se.Unit = string(sc), string(sc.Unit())
		switch {
		case !slices.Contains([]controls.ExemptionUse{controls.UseEssential, controls.UseCritical, controls.UseLaboratory, controls.UseHighAmbient}, controls.ExemptionUse(e.Use)):
			b.addf(f+".use", "must be ESSENTIAL, CRITICAL, LABORATORY or HIGH_AMBIENT_TEMPERATURE")
		case v == nil:
			if err := controls.CheckExemptionScope(controls.ExemptionUse(e.Use), sc); err != nil {
				b.addf(f+".use", "%s", err.Error())
			}
		}
		if !amountOK(se.Amount) {
			b.addf(f+".amount", "is %v; accepted: a number ≥ 0 in ODP t (Annexes A to E) or CO2-eq t (F)", se.Amount)
		}
		se.Source = b.source(f+".source", e.Source)
		se.Note = b.note(f+".note", e.Note)
		out = append(out, se)
	}
	if err := b.err(); err != nil {
		return nil, err
	}
	return out, x.w.PutExemptions(ctx, out)
}

// RecordOfficialFigures validates and stores baselines and limits as officially set.
func (x *Figures) RecordOfficialFigures(ctx context.Context, in []OfficialFigure) ([]OfficialFigure, error) {
	b, err := newBatch("figures", len(in), MaxYearFigures, "figures")
	if err != nil {
		return nil, err
	}
	out := make([]OfficialFigure, 0, len(in))
	for i, g := range in {
		f := fmt.Sprintf("figures[%d]", i)
		sf := OfficialFigure{Key: b.key(i, f+".figure_key", g.Key, "BASELINE-C/I"), Kind: g.Kind, Year: g.Year, Value: g.Value}
		if sf.CountryCode, err = x.country(ctx, b, f+".country_code", g.CountryCode); err != nil {
			return nil, err
		}
		switch {
		case sf.Kind != "baseline" && sf.Kind != "limit":
			b.addf(f+".kind", "must be BASELINE or LIMIT")
		case sf.Kind == "baseline" && sf.Year != 0:
			b.addf(f+".year", "is %d; a baseline has no year: give 0", sf.Year)
		case sf.Kind == "limit":
			b.add(CheckQueryYear(f+".year", sf.Year))
		}
		sc, v := scopeField(f+".annex_group", g.Scope)
		b.add(v)
		sf.Scope, sf.Unit = string(sc), string(sc.Unit())
		if !amountOK(sf.Value) {
			b.addf(f+".value", "is %v; accepted: a number ≥ 0 in ODP t (Annexes A to E) or CO2-eq t (F)", sf.Value)
		}
		sf.Source = b.source(f+".source", g.Source)
		out = append(out, sf)
	}
	if err := b.err(); err != nil {
		return nil, err
	}
	if err := x.w.PutOfficialFigures(ctx, out); errors.Is(err, ErrDuplicate) {
		return nil, fmt.Errorf("%w: a figure of the same Party, kind, scope and year is stored under another figure_key; send it under that key to replace it (ListOfficialFigures shows the keys); nothing was stored", err)
	} else if err != nil {
		return nil, err
	}
	return out, nil
}

// RecordHFC23Entries validates and stores HFC-23 facility entries (Art. 2J paras 6-7; Art.
// 3 para 1(d); Art. 7 para 3 ter): what leaves a facility cannot exceed what it generated.
func (x *Figures) RecordHFC23Entries(ctx context.Context, in []HFC23Entry) ([]HFC23Entry, error) {
	b, err := newBatch("entries", len(in), MaxYearFigures, "entries")
	if err != nil {
		return nil, err
	}
	out := make([]HFC23Entry, 0, len(in))
	facYear := map[string]int{}
	for i, e := range in {
		f := fmt.Sprintf("entries[%d]", i)
		se := e
		se.Key = b.key(i, f+".entry_key", e.Key, "HFC23-2025-PLANT-1")
		se.Facility = strings.TrimSpace(e.Facility)
		if se.Facility == "" || len(se.Facility) > maxKeyBytes || !printable(se.Facility) {
			b.addf(f+".facility", "must name the facility (printable text of 1 to %d bytes)", maxKeyBytes)
		}
		b.add(CheckQueryYear(f+".year", se.Year))
		fy := fmt.Sprintf("%s/%d", se.Facility, se.Year)
		if j, dup := facYear[fy]; dup {
			b.addf(f+".facility", "%s in %d is also in entries[%d]; one entry per facility and year", se.Facility, se.Year, j)
		}
		facYear[fy] = i
		for _, q := range []struct {
			name string
			v    exact.Decimal
		}{{"generated_tonnes", se.Generated}, {"captured_used_tonnes", se.CapturedUsed}, {"destroyed_tonnes", se.Destroyed}, {"emitted_tonnes", se.Emitted}} {
			b.tonnes(f+"."+q.name, q.v)
		}
		if parts := exact.Sum(se.CapturedUsed, se.Destroyed, se.Emitted); parts.Cmp(se.Generated) > 0 {
			b.addf(f+".generated_tonnes", "is %v t, less than captured + destroyed + emitted = %v t; what leaves a facility cannot exceed what it generated", se.Generated, parts)
		}
		se.Note = b.note(f+".note", e.Note)
		out = append(out, se)
	}
	if err := b.err(); err != nil {
		return nil, err
	}
	if err := x.w.PutHFC23Entries(ctx, out); errors.Is(err, ErrDuplicate) {
		return nil, fmt.Errorf("%w: the facility's figures for that year are stored under another entry_key; send them under that key to replace them (ListHfc23Entries shows the keys); nothing was stored", err)
	} else if err != nil {
		return nil, err
	}
	return out, nil
}
