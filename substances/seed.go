package substances

import (
	"embed"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"strconv"
	"strings"
)

// seedFiles holds the seed catalogue: Annex entries, uncontrolled blend components, blends and
// the publications their values come from.
//
//go:embed data/*.csv
var seedFiles embed.FS

// Seed file names inside seedFiles.
const (
	seedAnnexFile      = "data/annex.csv"
	seedComponentsFile = "data/components.csv"
	seedBlendsFile     = "data/blends.csv"
	seedSourcesFile    = "data/sources.csv"
)

// ErrSeed is wrapped by every error about the embedded seed files.
var ErrSeed = errors.New("invalid seed data")

// SeedError names the seed file, line and field of a value that cannot be used.
type SeedError struct {
	File  string // e.g. "data/annex.csv"
	Line  int    // 1-based line of the record in the file
	Field string // column name
	Err   error  // what is wrong
}

func (e *SeedError) Error() string {
	return fmt.Sprintf("seed file %s line %d, field %s: %v", e.File, e.Line, e.Field, e.Err)
}

// Unwrap returns the underlying error.
func (e *SeedError) Unwrap() error { return e.Err }

// Is makes errors.Is(err, ErrSeed) hold for every SeedError.
func (e *SeedError) Is(target error) bool { return target == ErrSeed }

// substanceColumns are the columns of annex.csv and components.csv.
var substanceColumns = []string{"designation", "synonyms", "chemical_name", "formula", "structure",
	"treaty_formula", "cas", "cas_src", "group", "odp", "odp_low", "odp_high", "odp_src", "isomers",
	"isomers_src", "gwp_mp", "gwp_mp_src", "gwp_ar4", "gwp_ar4_src", "gwp_ar5", "gwp_ar5_src",
	"gwp_ar6", "gwp_ar6_src", "lifetime", "lifetime_src", "hs2017", "hs2022", "hs_src", "safety",
	"safety_src", "note"}

// blendColumns are the columns of blends.csv.
var blendColumns = []string{"designation", "synonyms", "type", "components", "mass_pct", "tol_plus",
	"tol_minus", "composition_src", "tolerance_src", "safety", "safety_src", "note"}

// compositionTolerance is how far a composition may sum away from 100 mass %.
const compositionTolerance = 0.01

// Seed parses the embedded seed files into substances and blends. It computes each molar mass
// from the formula and checks every row: the formula parses and is in Hill order, a structure
// or treaty formula has the same atoms, the CAS check digit holds, a designation that the
// ASHRAE 34 rule decodes gives the same formula, HS subheadings exist, each value names its
// source, and each blend's components exist and sum to 100 ± 0.01 %. Errors are *SeedError
// values naming the file, line and field.
func Seed() ([]Substance, []Blend, error) { return seedFrom(seedFiles) }

// seedFrom reads the seed files from fsys.
func seedFrom(fsys fs.FS) ([]Substance, []Blend, error) {
	sources, err := readSeedSources(fsys)
	if err != nil {
		return nil, nil, err
	}
	annex, err := readSeedSubstances(fsys, seedAnnexFile, sources, true)
	if err != nil {
		return nil, nil, err
	}
	others, err := readSeedSubstances(fsys, seedComponentsFile, sources, false)
	if err != nil {
		return nil, nil, err
	}
	subs := append(annex, others...)
	known := make(map[string]bool, len(subs))
	for _, s := range subs {
		known[s.Designation] = true
	}
	blends, err := readSeedBlends(fsys, seedBlendsFile, sources, known)
	if err != nil {
		return nil, nil, err
	}
	return subs, blends, nil
}

// seedTable reads one CSV seed file with a header line; '#' lines are comments.
type seedTable struct {
	file string
	r    *csv.Reader
	col  map[string]int
	rec  []string
}

func openSeedTable(fsys fs.FS, file string, want []string) (*seedTable, error) {
	f, err := fsys.Open(file)
	if err != nil {
		return nil, &SeedError{File: file, Field: "-", Err: err}
	}
	// The embedded files are small; read them whole so the reader owns no open file.
	b, err := io.ReadAll(f)
	f.Close()
	if err != nil {
		return nil, &SeedError{File: file, Field: "-", Err: err}
	}
	r := csv.NewReader(strings.NewReader(string(b)))
	r.Comment = '#'
	header, err := r.Read()
	if err != nil {
		return nil, &SeedError{File: file, Line: 1, Field: "header", Err: err}
	}
	t := &seedTable{file: file, r: r, col: make(map[string]int, len(header))}
	for i, h := range header {
		t.col[h] = i
	}
	for _, w := range want {
		if _, ok := t.col[w]; !ok {
			line, _ := r.FieldPos(0)
			return nil, &SeedError{File: file, Line: line, Field: "header", Err: fmt.Errorf("missing column %q", w)}
		}
	}
	r.FieldsPerRecord = len(header)
	return t, nil
}

// readSeedRows opens a seed file with the wanted columns and builds one value from each
// row with row, stopping at the first error.
func readSeedRows[T any](fsys fs.FS, file string, want []string, row func(*seedTable) (T, error)) ([]T, error) {
	t, err := openSeedTable(fsys, file, want)
	if err != nil {
		return nil, err
	}
	var out []T
	for {
		ok, err := t.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			return out, nil
		}
		v, err := row(t)
		if err != nil {
			return nil, err
		}
		out = append(out, v)
	}
}

// next reads the next record; it returns false at the end of the file.
func (t *seedTable) next() (bool, error) {
	rec, err := t.r.Read()
	if err == io.EOF {
		return false, nil
	}
	if err != nil {
		line := 0
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			line = pe.Line
		}
		return false, &SeedError{File: t.file, Line: line, Field: "-", Err: err}
	}
	t.rec = rec
	return true, nil
}

func (t *seedTable) get(name string) string { return strings.TrimSpace(t.rec[t.col[name]]) }

func (t *seedTable) fail(field string, format string, args ...any) error {
	line, _ := t.r.FieldPos(t.col[field])
	return &SeedError{File: t.file, Line: line, Field: field, Err: fmt.Errorf(format, args...)}
}

func (t *seedTable) wrap(field string, err error) error {
	line, _ := t.r.FieldPos(t.col[field])
	return &SeedError{File: t.file, Line: line, Field: field, Err: err}
}

// number reads an optional non-negative finite number; ok is false when the field is empty.
func (t *seedTable) number(field string) (v float64, ok bool, err error) {
	s := t.get(field)
	if s == "" {
		return 0, false, nil
	}
	v, err = strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
		return 0, false, t.fail(field, "%q is not a finite number >= 0", s)
	}
	return v, true, nil
}

// source checks that a value's source field names known publications and returns their
// citations joined by "; ". A value needs a source; an empty value must have none.
func (t *seedTable) source(field, srcField string, sources map[string]string) (string, error) {
	v, src := t.get(field), t.get(srcField)
	if v == "" && src == "" {
		return "", nil
	}
	if v == "" {
		return "", t.fail(srcField, "source %q given for an empty %s", src, field)
	}
	if src == "" {
		return "", t.fail(srcField, "value %q of %s names no source; give codes from %s", v, field, seedSourcesFile)
	}
	var cites []string
	for _, code := range strings.Split(src, "+") {
		c, ok := sources[code]
		if !ok {
			return "", t.fail(srcField, "unknown source code %q; codes are listed in %s", code, seedSourcesFile)
		}
		cites = append(cites, c)
	}
	return strings.Join(cites, " + "), nil
}

func readSeedSources(fsys fs.FS) (map[string]string, error) {
	t, err := openSeedTable(fsys, seedSourcesFile, []string{"code", "citation"})
	if err != nil {
		return nil, err
	}
	m := map[string]string{}
	for {
		ok, err := t.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			return m, nil
		}
		code, cite := t.get("code"), t.get("citation")
		if code == "" || cite == "" {
			return nil, t.fail("code", "code and citation are both required")
		}
		if _, dup := m[code]; dup {
			return nil, t.fail("code", "code %q listed twice", code)
		}
		m[code] = cite
	}
}

// sourceNotes collects "what: publication" pairs, grouping the fields that share a publication.
type sourceNotes struct {
	order []string
	what  map[string][]string
}

func (n *sourceNotes) add(what, cite string) {
	if cite == "" {
		return
	}
	if n.what == nil {
		n.what = map[string][]string{}
	}
	if _, ok := n.what[cite]; !ok {
		n.order = append(n.order, cite)
	}
	n.what[cite] = append(n.what[cite], what)
}

func (n *sourceNotes) String() string {
	parts := make([]string, 0, len(n.order))
	for _, c := range n.order {
		parts = append(parts, strings.Join(n.what[c], ", ")+": "+c)
	}
	return strings.Join(parts, "; ")
}

func splitList(s, sep string) []string {
	if strings.TrimSpace(s) == "" {
		return nil
	}
	var out []string
	for _, p := range strings.Split(s, sep) {
		if p = strings.TrimSpace(p); p != "" {
			out = append(out, p)
		}
	}
	return out
}

func validGroup(g Group) bool {
	if g == GroupNone {
		return true
	}
	for _, a := range AllGroups {
		if a == g {
			return true
		}
	}
	return false
}

// mpGWPGroup reports whether the Annex of a group lists 100-year GWPs (Kigali Amendment).
func mpGWPGroup(g Group) bool {
	return g == GroupAI || g == GroupCI || g == GroupFI || g == GroupFII
}

// readSeedSubstances reads the substances of an annex.csv-shaped seed file.
func readSeedSubstances(fsys fs.FS, file string, sources map[string]string, annex bool) ([]Substance, error) {
	return readSeedRows(fsys, file, substanceColumns, func(t *seedTable) (Substance, error) { return t.substance(sources, annex) })
}

// substance builds and checks the Substance of the current row.
func (t *seedTable) substance(sources map[string]string, annex bool) (Substance, error) {
	var s Substance
	var notes sourceNotes
	s.Designation = t.get("designation")
	if s.Designation == "" {
		return s, t.fail("designation", "designation is required")
	}
	s.Synonyms = splitList(t.get("synonyms"), ";")
	s.ChemicalName = t.get("chemical_name")
	if s.ChemicalName == "" {
		return s, t.fail("chemical_name", "chemical name is required")
	}

	// Formula, molar mass, structure, treaty formula.
	s.Formula = t.get("formula")
	f, err := ParseFormula(s.Formula)
	if err != nil {
		return s, t.wrap("formula", err)
	}
	if h := f.Hill(); h != s.Formula {
		return s, t.fail("formula", "%q is not written in Hill order; write %q", s.Formula, h)
	}
	if s.MolarMass, err = f.MolarMass(); err != nil {
		return s, t.wrap("formula", err)
	}
	for _, field := range []string{"structure", "treaty_formula"} {
		v := t.get(field)
		if v == "" {
			continue
		}
		g, err := ParseFormula(v)
		if err != nil {
			return s, t.wrap(field, err)
		}
		if !g.Equal(f) {
			return s, t.fail(field, "%q has atoms %s, but formula is %s", v, g.Hill(), s.Formula)
		}
	}
	s.Structure = t.get("structure")

	// Designation and synonyms that the ASHRAE 34 rule decodes must give the same formula.
	for _, name := range append([]string{s.Designation}, s.Synonyms...) {
		d, err := ParseDesignation(name)
		if err != nil {
			continue // a chemical name, trade abbreviation or a number the rule does not decode
		}
		field := "synonyms"
		if name == s.Designation {
			field = "designation"
		}
		if !d.Formula.Equal(f) {
			return s, t.fail(field, "%q decodes to %s, but formula is %s", name, d.Formula.Hill(), s.Formula)
		}
		if d.Isomer != "" && s.Structure != "" && !strings.EqualFold(d.Prefix, "halon") {
			if suf, err := IsomerSuffix(s.Structure); err == nil && !sameIsomer(suf, d.Isomer) {
				return s, t.fail(field, "%q names isomer %q, but structure %s is isomer %q", name, d.Isomer, s.Structure, suf)
			}
		}
	}

	// CAS Registry Number.
	if cas := t.get("cas"); cas != "" {
		n, err := ParseCAS(cas)
		if err != nil {
			return s, t.wrap("cas", err)
		}
		if n != cas {
			return s, t.fail("cas", "write the CAS Registry Number as %q", n)
		}
		s.CAS = n
	}
	cite, err := t.source("cas", "cas_src", sources)
	if err != nil {
		return s, err
	}
	notes.add("CAS", cite)

	// Group and ODP.
	s.Group = Group(t.get("group"))
	if !validGroup(s.Group) {
		return s, t.fail("group", "%q is not an Annex group; use one of %v or leave empty", s.Group, AllGroups)
	}
	if annex && s.Group == GroupNone {
		return s, t.fail("group", "an Annex entry needs its Annex group")
	}
	if !annex && s.Group != GroupNone {
		return s, t.fail("group", "controlled substance %q belongs in %s", s.Designation, seedAnnexFile)
	}
	odp, ok, err := t.number("odp")
	if err != nil {
		return s, err
	}
	if !ok {
		return s, t.fail("odp", "ODP is required (0 where the Annex lists none)")
	}
	s.ODP = odp
	lo, okLo, err := t.number("odp_low")
	if err != nil {
		return s, err
	}
	hi, okHi, err := t.number("odp_high")
	if err != nil {
		return s, err
	}
	if okLo != okHi {
		return s, t.fail("odp_high", "give both ends of an ODP range or neither")
	}
	if okLo {
		if lo > hi {
			return s, t.fail("odp_low", "range %g-%g runs backwards", lo, hi)
		}
		if odp != hi {
			return s, t.fail("odp", "%g must be the upper end %g of the range (Annex C footnote)", odp, hi)
		}
		s.ODPLow, s.ODPHigh = lo, hi
	}
	if !s.Group.Controlled() && odp != 0 {
		return s, t.fail("odp", "an uncontrolled substance counts with ODP 0 in the Protocol's calculations")
	}
	if cite, err = t.source("odp", "odp_src", sources); err != nil {
		return s, err
	}
	notes.add("ODP", cite)

	// Isomer count.
	n, err := strconv.Atoi(t.get("isomers"))
	if err != nil || n < 1 {
		return s, t.fail("isomers", "%q is not a whole number >= 1", t.get("isomers"))
	}
	s.IsomerCount = n
	if n > 1 && s.CAS != "" && s.Structure == "" {
		return s, t.fail("cas", "an isomer group without a representative structure carries no single CAS")
	}
	if cite, err = t.source("isomers", "isomers_src", sources); err != nil {
		return s, err
	}
	notes.add("isomer count", cite)

	// GWPs.
	s.GWP = map[GWPSet]float64{}
	for _, g := range []struct {
		set   GWPSet
		field string
	}{{SetProtocol, "gwp_mp"}, {SetAR4, "gwp_ar4"}, {SetAR5, "gwp_ar5"}, {SetAR6, "gwp_ar6"}} {
		v, ok, err := t.number(g.field)
		if err != nil {
			return s, err
		}
		if cite, err = t.source(g.field, g.field+"_src", sources); err != nil {
			return s, err
		}
		if !ok {
			continue
		}
		s.GWP[g.set] = v
		notes.add(string(g.set)+" GWP", cite)
	}
	if _, ok := s.GWP[SetProtocol]; ok && !mpGWPGroup(s.Group) {
		return s, t.fail("gwp_mp", "the Protocol lists GWPs only in Annex A Group I, Annex C Group I and Annex F, not %q", s.Group)
	}
	if s.Group == GroupFI || s.Group == GroupFII {
		if _, ok := s.GWP[SetProtocol]; !ok {
			return s, t.fail("gwp_mp", "every Annex F substance has an Annex GWP")
		}
	}
	if mp, ok := s.GWP[SetProtocol]; ok {
		if ar4, ok := s.GWP[SetAR4]; ok && ar4 != mp {
			return s, t.fail("gwp_ar4", "AR4 value %g differs from the Annex value %g, which the Annex takes from AR4", ar4, mp)
		}
	}

	// Lifetime.
	if s.Lifetime, _, err = t.number("lifetime"); err != nil {
		return s, err
	}
	if cite, err = t.source("lifetime", "lifetime_src", sources); err != nil {
		return s, err
	}
	notes.add("lifetime", cite)

	// HS subheadings.
	for _, h := range []struct {
		ed    HSEdition
		field string
		dst   *[]string
	}{{HS2017, "hs2017", &s.HS2017}, {HS2022, "hs2022", &s.HS2022}} {
		for _, code := range splitList(t.get(h.field), ";") {
			norm, err := NormalizeHS(code)
			if err != nil {
				return s, t.wrap(h.field, err)
			}
			if norm != code {
				return s, t.fail(h.field, "write HS code %q as %q", code, norm)
			}
			if _, ok := LookupHS(h.ed, norm); !ok {
				return s, t.fail(h.field, "%s has no subheading %s", h.ed, norm)
			}
			*h.dst = append(*h.dst, norm)
		}
	}
	if (len(s.HS2017) == 0) != (len(s.HS2022) == 0) {
		return s, t.fail("hs2022", "give HS 2017 and HS 2022 subheadings together")
	}
	hsv := strings.TrimSpace(t.get("hs2017") + t.get("hs2022"))
	switch src := t.get("hs_src"); {
	case hsv != "" && src == "":
		return s, t.fail("hs_src", "HS subheadings name no source")
	case hsv == "" && src != "":
		return s, t.fail("hs_src", "source given without HS subheadings")
	case src != "":
		c, ok := sources[src]
		if !ok {
			return s, t.fail("hs_src", "unknown source code %q", src)
		}
		notes.add("HS codes", c)
	}

	// Safety class.
	s.SafetyClass = t.get("safety")
	if !validSafetyClass(s.SafetyClass) {
		return s, t.fail("safety", "%q is not an ASHRAE 34 safety class; use one of %v or leave empty", s.SafetyClass, SafetyClasses)
	}
	if cite, err = t.source("safety", "safety_src", sources); err != nil {
		return s, err
	}
	notes.add("safety class", cite)

	s.Sources = notes.String()
	if note := t.get("note"); note != "" {
		s.Sources += "; note: " + note
	}
	return s, nil
}

// sameIsomer compares isomer suffixes, ignoring a stereo descriptor such as "(E)" on either.
func sameIsomer(a, b string) bool {
	strip := func(s string) string {
		if i := strings.IndexByte(s, '('); i >= 0 {
			s = s[:i]
		}
		return strings.ToLower(s)
	}
	return strip(a) == strip(b)
}

// readSeedBlends reads the blends of blends.csv; known holds the substance designations.
func readSeedBlends(fsys fs.FS, file string, sources map[string]string, known map[string]bool) ([]Blend, error) {
	return readSeedRows(fsys, file, blendColumns, func(t *seedTable) (Blend, error) { return t.blend(sources, known) })
}

// blend builds and checks the Blend of the current row.
func (t *seedTable) blend(sources map[string]string, known map[string]bool) (Blend, error) {
	var b Blend
	var notes sourceNotes
	b.Designation = t.get("designation")
	if b.Designation == "" {
		return b, t.fail("designation", "designation is required")
	}
	b.Synonyms = splitList(t.get("synonyms"), ";")
	b.Type = t.get("type")
	switch {
	case b.Type != "zeotrope" && b.Type != "azeotrope":
		return b, t.fail("type", "%q: use zeotrope or azeotrope", b.Type)
	case strings.HasPrefix(b.Designation, "R-4") && b.Type != "zeotrope",
		strings.HasPrefix(b.Designation, "R-5") && b.Type != "azeotrope":
		return b, t.fail("type", "ASHRAE 34 numbers zeotropes in the 400 series and azeotropes in the 500 series")
	}
	comps := splitList(t.get("components"), "/")
	if len(comps) == 0 {
		return b, t.fail("components", "a blend needs components")
	}
	pcts, err := t.numberList("mass_pct", len(comps), true)
	if err != nil {
		return b, err
	}
	plus, err := t.numberList("tol_plus", len(comps), false)
	if err != nil {
		return b, err
	}
	minus, err := t.numberList("tol_minus", len(comps), false)
	if err != nil {
		return b, err
	}
	if (plus == nil) != (minus == nil) {
		return b, t.fail("tol_minus", "give tolerances above and below nominal together")
	}
	seen := map[string]bool{}
	sum := 0.0
	for i, c := range comps {
		if !known[c] {
			return b, t.fail("components", "component %q is not a seeded substance designation", c)
		}
		if seen[c] {
			return b, t.fail("components", "component %q listed twice", c)
		}
		seen[c] = true
		if pcts[i] <= 0 || pcts[i] > 100 {
			return b, t.fail("mass_pct", "share %g of %s must be above 0 and at most 100", pcts[i], c)
		}
		comp := Component{Designation: c, MassPct: pcts[i]}
		if plus != nil {
			comp.TolPlus, comp.TolMinus = plus[i], minus[i]
		}
		b.Components = append(b.Components, comp)
		sum += pcts[i]
	}
	if math.Abs(sum-100) > compositionTolerance {
		return b, t.wrap("mass_pct", &CompositionError{Sum: sum})
	}
	cite, err := t.source("mass_pct", "composition_src", sources)
	if err != nil {
		return b, err
	}
	notes.add("composition", cite)
	if cite, err = t.source("tol_plus", "tolerance_src", sources); err != nil {
		return b, err
	}
	notes.add("tolerances", cite)
	b.SafetyClass = t.get("safety")
	if !validSafetyClass(b.SafetyClass) {
		return b, t.fail("safety", "%q is not an ASHRAE 34 safety class; use one of %v or leave empty", b.SafetyClass, SafetyClasses)
	}
	if cite, err = t.source("safety", "safety_src", sources); err != nil {
		return b, err
	}
	notes.add("safety class", cite)
	b.Sources = notes.String()
	if note := t.get("note"); note != "" {
		b.Sources += "; note: " + note
	}
	return b, nil
}

// numberList reads a '/'-separated list of n non-negative numbers; an empty optional field
// gives nil.
func (t *seedTable) numberList(field string, n int, required bool) ([]float64, error) {
	s := t.get(field)
	if s == "" {
		if required {
			return nil, t.fail(field, "required")
		}
		return nil, nil
	}
	parts := strings.Split(s, "/")
	if len(parts) != n {
		return nil, t.fail(field, "%d values for %d components", len(parts), n)
	}
	out := make([]float64, n)
	for i, p := range parts {
		v, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return nil, t.fail(field, "value %d %q is not a finite number >= 0", i+1, p)
		}
		out[i] = v
	}
	return out, nil
}
