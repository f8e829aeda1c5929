package substances

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"
	"sync"
	"sync/atomic"
	"unicode"
	"unicode/utf8"
)

// ErrInvalidCatalogue is wrapped by every NewCatalogue error.
var ErrInvalidCatalogue = errors.New("invalid catalogue")

// CatalogueError names the catalogue entry and field that NewCatalogue rejected.
type CatalogueError struct {
	Entry  string // designation of the substance or blend ("" when it has none)
	Field  string // e.g. "Components[2].MassPct"
	Reason string // what is wrong and what is accepted
}

func (e *CatalogueError) Error() string {
	return fmt.Sprintf("catalogue entry %q, field %s: %s", e.Entry, e.Field, e.Reason)
}

// Unwrap makes errors.Is(err, ErrInvalidCatalogue) hold.
func (e *CatalogueError) Unwrap() error { return ErrInvalidCatalogue }

// Catalogue is an immutable, indexed snapshot of substances and blends. It is safe for
// concurrent use. Pointers and slices it hands out share its memory and must not be modified.
type Catalogue struct {
	subs   []subEntry   // in Substances() order
	blends []blendEntry // in Blends() order

	subList   []*Substance
	blendList []*Blend

	names    map[string]int32 // normalized name -> index into hits
	hits     []nameHit
	formulas map[string]int32 // formula text as written (spaces removed) -> index into res
	structs  map[string]int32 // structureKey of a linear structure -> index into res
	hills    map[string]int32 // Hill formula -> index into res
	cas      map[string]int32 // normalized CAS number -> index into res
	hs       map[string]int32 // normalized HS code -> index into res
	res      []Resolution

	byHill  map[string][]int32 // Hill formula -> substance indexes
	suggest []suggestKey

	slow  sync.Map     // identifier -> Resolution, for identifiers past the exact lookups
	slowN atomic.Int64 // entries in slow

	adhoc  sync.Map     // composition key -> *adhocEntry (EvaluateShares)
	adhocN atomic.Int64 // entries in adhoc
}

// target points at one catalogue entry.
type target struct {
	kind Kind
	idx  int32
}

// nameHit is a precomputed exact-name lookup.
type nameHit struct {
	t   target
	res Resolution
}

type subEntry struct {
	s       *Substance
	formula Formula    // nil when the substance has no parsable formula
	isomer  string     // isomer suffix of its own ASHRAE designation, when decodable
	decoded bool       // whether isomer was learnt from a decodable designation
	comps   []compData // the substance as one component at 100 %
	base    Evaluation
}

type blendEntry struct {
	b      *Blend
	groups []Group
	comps  []compData
	base   Evaluation
}

type suggestKey struct {
	key     string // normalized
	display string
	t       target
}

// NewCatalogue validates substances and blends, copies them and builds the indexes the
// resolver and the mixture arithmetic use. Names (designations, synonyms, chemical names) are
// compared case-, space- and hyphen-insensitively and must each name one entry; every blend
// component must be a catalogue substance and the components must sum to 100 ± 0.01 mass %.
// Errors are *CatalogueError values (or *CompositionError for a composition) wrapping
// ErrInvalidCatalogue.
func NewCatalogue(subs []Substance, blends []Blend) (*Catalogue, error) {
	c := &Catalogue{
		names:    map[string]int32{},
		formulas: map[string]int32{},
		structs:  map[string]int32{},
		hills:    map[string]int32{},
		cas:      map[string]int32{},
		hs:       map[string]int32{},
		byHill:   map[string][]int32{},
	}
	copies := make([]Substance, len(subs))
	for i := range subs {
		s, err := checkSubstance(subs[i])
		if err != nil {
			return nil, err
		}
		copies[i] = s
	}
	sort.SliceStable(copies, func(i, j int) bool { return substanceLess(&copies[i], &copies[j]) })
	c.subs = make([]subEntry, len(copies))
	c.subList = make([]*Substance, len(copies))
	for i := range copies {
		s := &copies[i]
		c.subList[i] = s
		e := subEntry{s: s}
		if s.Formula != "" {
			e.formula, _ = ParseFormula(s.Formula) // checked by checkSubstance
		}
		c.subs[i] = e
	}

	bcopies := make([]Blend, len(blends))
	for i := range blends {
		bcopies[i] = copyBlend(blends[i])
	}
	sort.SliceStable(bcopies, func(i, j int) bool { return naturalLess(bcopies[i].Designation, bcopies[j].Designation) })
	c.blends = make([]blendEntry, len(bcopies))
	c.blendList = make([]*Blend, len(bcopies))
	for i := range bcopies {
		c.blends[i] = blendEntry{b: &bcopies[i]}
		c.blendList[i] = &bcopies[i]
	}

	if err := c.indexNames(); err != nil {
		return nil, err
	}
	if err := c.checkBlends(); err != nil {
		return nil, err
	}
	c.learnIsomers()
	c.indexFormulas()
	c.indexCAS()
	c.indexHS()
	c.prepareEvaluations()
	return c, nil
}

// checkSubstance validates one substance and returns a deep copy.
func checkSubstance(in Substance) (Substance, error) {
	s := in
	fail := func(field, format string, args ...any) (Substance, error) {
		return Substance{}, &CatalogueError{Entry: in.Designation, Field: field, Reason: fmt.Sprintf(format, args...)}
	}
	if strings.TrimSpace(s.Designation) == "" {
		return fail("Designation", "a designation is required")
	}
	if !validGroup(s.Group) {
		return fail("Group", "%q is not an Annex group; use one of %v or leave empty", s.Group, AllGroups)
	}
	for _, v := range []struct {
		field string
		v     float64
	}{{"ODP", s.ODP}, {"ODPLow", s.ODPLow}, {"ODPHigh", s.ODPHigh}, {"Lifetime", s.Lifetime}, {"MolarMass", s.MolarMass}} {
		if math.IsNaN(v.v) || math.IsInf(v.v, 0) || v.v < 0 {
			return fail(v.field, "%v is not a finite number >= 0", v.v)
		}
	}
	if s.Formula != "" {
		f, err := ParseFormula(s.Formula)
		if err != nil {
			return fail("Formula", "%v", err)
		}
		if s.MolarMass == 0 {
			s.MolarMass, _ = f.MolarMass()
		}
	}
	if s.CAS != "" {
		n, err := ParseCAS(s.CAS)
		if err != nil {
			return fail("CAS", "%v", err)
		}
		s.CAS = n
	}
	if !validSafetyClass(s.SafetyClass) {
		return fail("SafetyClass", "%q is not an ASHRAE 34 safety class; use one of %v or leave empty", s.SafetyClass, SafetyClasses)
	}
	if s.IsomerCount < 1 {
		s.IsomerCount = 1
	}
	s.Synonyms = append([]string(nil), in.Synonyms...)
	s.HS2017 = append([]string(nil), in.HS2017...)
	s.HS2022 = append([]string(nil), in.HS2022...)
	s.GWP = make(map[GWPSet]float64, len(in.GWP))
	for k, v := range in.GWP {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return fail("GWP["+string(k)+"]", "%v is not a finite number >= 0", v)
		}
		s.GWP[k] = v
	}
	return s, nil
}

func copyBlend(in Blend) Blend {
	b := in
	b.Synonyms = append([]string(nil), in.Synonyms...)
	b.Components = append([]Component(nil), in.Components...)
	return b
}

// groupRank orders Annex groups; uncontrolled substances come last.
func groupRank(g Group) int {
	for i, a := range AllGroups {
		if a == g {
			return i
		}
	}
	return len(AllGroups)
}

func substanceLess(a, b *Substance) bool {
	if ra, rb := groupRank(a.Group), groupRank(b.Group); ra != rb {
		return ra < rb
	}
	return naturalLess(a.Designation, b.Designation)
}

// naturalLess compares case-insensitively, reading runs of digits as numbers, so that
// HCFC-22 sorts before HCFC-123.
func naturalLess(a, b string) bool {
	i, j := 0, 0
	for i < len(a) && j < len(b) {
		ca, cb := a[i], b[j]
		if isDigit(ca) && isDigit(cb) {
			si, sj := i, j
			for i < len(a) && isDigit(a[i]) {
				i++
			}
			for j < len(b) && isDigit(b[j]) {
				j++
			}
			na, nb := strings.TrimLeft(a[si:i], "0"), strings.TrimLeft(b[sj:j], "0")
			if len(na) != len(nb) {
				return len(na) < len(nb)
			}
			if na != nb {
				return na < nb
			}
			continue
		}
		la, lb := lowerASCII(ca), lowerASCII(cb)
		if la != lb {
			return la < lb
		}
		i++
		j++
	}
	return len(a)-i < len(b)-j
}

func isDigit(c byte) bool { return c >= '0' && c <= '9' }

func lowerASCII(c byte) byte {
	if c >= 'A' && c <= 'Z' {
		return c + 'a' - 'A'
	}
	return c
}

// normalizeName appends the lookup key of s to dst: lower case, without spaces, hyphens,
// dashes and underscores.
func normalizeName(dst []byte, s string) []byte {
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			i++
			switch {
			case c == ' ' || c == '-' || c == '_' || c == '\t' || c == '\n' || c == '\r':
			case c >= 'A' && c <= 'Z':
				dst = append(dst, c+'a'-'A')
			default:
				dst = append(dst, c)
			}
			continue
		}
		r, n := utf8.DecodeRuneInString(s[i:])
		i += n
		switch {
		case r == '\u00a0' || (r >= '\u2010' && r <= '\u2015') || r == '\u2212' || unicode.IsSpace(r):
		default:
			dst = utf8.AppendRune(dst, unicode.ToLower(r))
		}
	}
	return dst
}

func normalizeString(s string) string { return string(normalizeName(nil, s)) }

// entryName returns the designation of a target.
func (c *Catalogue) entryName(t target) string {
	if t.kind == KindBlend {
		return c.blends[t.idx].b.Designation
	}
	return c.subs[t.idx].s.Designation
}

// addName records an exact name. A name may belong to one entry only.
func (c *Catalogue) addName(name string, t target, kind MatchKind) error {
	key := normalizeString(name)
	if key == "" {
		return nil
	}
	if i, ok := c.names[key]; ok {
		h := &c.hits[i]
		if h.t != t {
			return &CatalogueError{Entry: c.entryName(t), Field: "name", Reason: fmt.Sprintf("name %q is also a name of %q; every name must identify one entry", name, c.entryName(h.t))}
		}
		if matchRank(kind) < matchRank(h.res.Candidates[0].Match) {
			h.res.Candidates[0].Match = kind
			h.res.Candidates[0].Score = kind.score()
			h.res.Candidates[0].MatchedOn = name
		}
		return nil
	}
	c.names[key] = int32(len(c.hits))
	c.hits = append(c.hits, nameHit{t: t, res: Resolution{Candidates: []Candidate{c.candidate(t, kind, name)}}})
	c.suggest = append(c.suggest, suggestKey{key: key, display: name, t: t})
	return nil
}

// candidate builds a Candidate for a target.
func (c *Catalogue) candidate(t target, kind MatchKind, matchedOn string) Candidate {
	cand := Candidate{Kind: t.kind, Match: kind, Score: kind.score(), MatchedOn: matchedOn}
	if t.kind == KindBlend {
		cand.Designation = c.blends[t.idx].b.Designation
	} else {
		s := c.subs[t.idx].s
		cand.Designation, cand.Group = s.Designation, s.Group
	}
	return cand
}

// isFormulaSynonym reports whether a synonym is a way of writing the substance's formula.
func isFormulaSynonym(syn string, f Formula) bool {
	if f == nil {
		return false
	}
	g, err := ParseFormula(syn)
	return err == nil && g.Equal(f)
}

// indexNames records designations, synonyms and chemical names.
func (c *Catalogue) indexNames() error {
	for i := range c.subs {
		e := &c.subs[i]
		t := target{kind: KindSubstance, idx: int32(i)}
		if err := c.addName(e.s.Designation, t, MatchDesignation); err != nil {
			return err
		}
	}
	for i := range c.blends {
		t := target{kind: KindBlend, idx: int32(i)}
		if err := c.addName(c.blends[i].b.Designation, t, MatchDesignation); err != nil {
			return err
		}
	}
	for i := range c.subs {
		e := &c.subs[i]
		t := target{kind: KindSubstance, idx: int32(i)}
		for _, syn := range e.s.Synonyms {
			if isFormulaSynonym(syn, e.formula) {
				continue // indexed as a formula
			}
			if err := c.addName(syn, t, MatchSynonym); err != nil {
				return err
			}
		}
		if e.s.ChemicalName != "" {
			if err := c.addName(e.s.ChemicalName, t, MatchChemicalName); err != nil {
				return err
			}
		}
	}
	for i := range c.blends {
		t := target{kind: KindBlend, idx: int32(i)}
		for _, syn := range c.blends[i].b.Synonyms {
			if err := c.addName(syn, t, MatchSynonym); err != nil {
				return err
			}
		}
	}
	return nil
}

// lookupName finds an exact name without allocating.
func (c *Catalogue) lookupName(name string) (int32, bool) {
	var buf [96]byte
	key := normalizeName(buf[:0], name)
	i, ok := c.names[string(key)]
	if !ok && len(key) > 0 && isDigit(key[0]) {
		// "404A", "22": a bare ASHRAE number.
		var buf2 [97]byte
		k2 := append(append(buf2[:0], 'r'), key...)
		i, ok = c.names[string(k2)]
	}
	return i, ok
}

// checkBlends validates blend components and resolves them to catalogue substances.
func (c *Catalogue) checkBlends() error {
	for bi := range c.blends {
		b := c.blends[bi].b
		fail := func(field, format string, args ...any) error {
			return &CatalogueError{Entry: b.Designation, Field: field, Reason: fmt.Sprintf(format, args...)}
		}
		if len(b.Components) == 0 {
			return fail("Components", "a blend needs at least one component")
		}
		if !validSafetyClass(b.SafetyClass) {
			return fail("SafetyClass", "%q is not an ASHRAE 34 safety class; use one of %v or leave empty", b.SafetyClass, SafetyClasses)
		}
		sum := 0.0
		seen := map[int32]bool{}
		for i := range b.Components {
			comp := &b.Components[i]
			field := fmt.Sprintf("Components[%d]", i)
			hi, ok := c.names[normalizeString(comp.Designation)]
			if !ok || c.hits[hi].t.kind != KindSubstance {
				return fail(field+".Designation", "%q is not a catalogue substance", comp.Designation)
			}
			t := c.hits[hi].t
			if seen[t.idx] {
				return fail(field+".Designation", "%q is listed twice", comp.Designation)
			}
			seen[t.idx] = true
			comp.Designation = c.subs[t.idx].s.Designation
			if math.IsNaN(comp.MassPct) || comp.MassPct <= 0 || comp.MassPct > 100 {
				return fail(field+".MassPct", "%v: give a mass percentage above 0 and at most 100", comp.MassPct)
			}
			for _, tol := range []float64{comp.TolPlus, comp.TolMinus} {
				if math.IsNaN(tol) || math.IsInf(tol, 0) || tol < 0 {
					return fail(field+".TolPlus/TolMinus", "%v: tolerances are mass %% points >= 0", tol)
				}
			}
			sum += comp.MassPct
		}
		if math.Abs(sum-100) > compositionTolerance {
			return fmt.Errorf("catalogue entry %q: %w: %w", b.Designation, ErrInvalidCatalogue, &CompositionError{Sum: sum})
		}
	}
	return nil
}

// learnIsomers records the isomer suffix of each substance's own ASHRAE designation.
func (c *Catalogue) learnIsomers() {
	for i := range c.subs {
		e := &c.subs[i]
		if e.formula == nil {
			continue
		}
		for _, name := range append([]string{e.s.Designation}, e.s.Synonyms...) {
			d, err := ParseDesignation(name)
			if err != nil || strings.EqualFold(d.Prefix, "halon") || !d.Formula.Equal(e.formula) {
				continue
			}
			e.isomer, e.decoded = d.Isomer, true
			break
		}
	}
}

// isStructural reports whether a formula text repeats an element, i.e. is a condensed
// structure such as CH2FCF3 rather than a molecular formula such as C2H2F4.
func isStructural(s string) bool {
	var seen [8]string
	n := 0
	for i := 0; i < len(s); i++ {
		if s[i] < 'A' || s[i] > 'Z' {
			continue
		}
		j := i + 1
		if j < len(s) && s[j] >= 'a' && s[j] <= 'z' {
			j++
		}
		sym := s[i:j]
		for k := 0; k < n; k++ {
			if seen[k] == sym {
				return true
			}
		}
		if n < len(seen) {
			seen[n] = sym
			n++
		}
	}
	return false
}

// compactFormula removes spaces from a formula text.
func compactFormula(s string) string {
	if !strings.ContainsAny(s, " \t") {
		return s
	}
	return strings.NewReplacer(" ", "", "\t", "").Replace(s)
}

// indexFormulas records Hill formulas, structures and formula synonyms.
func (c *Catalogue) indexFormulas() {
	for i := range c.subs {
		e := &c.subs[i]
		if e.formula == nil {
			continue
		}
		h := e.formula.Hill()
		c.byHill[h] = append(c.byHill[h], int32(i))
	}
	// Molecular formulas: every substance with those atoms, equally.
	hills := make([]string, 0, len(c.byHill))
	for h := range c.byHill {
		hills = append(hills, h)
	}
	sort.Strings(hills)
	for _, h := range hills {
		c.hills[h] = c.addRes(c.formulaResolution(h, "", c.byHill[h]))
	}
	// Written forms: structures and formula synonyms, as written.
	type form struct {
		text string
		hill string
	}
	var forms []form
	seen := map[string]bool{}
	for i := range c.subs {
		e := &c.subs[i]
		if e.formula == nil {
			continue
		}
		h := e.formula.Hill()
		texts := []string{e.s.Formula, e.s.Structure}
		for _, syn := range e.s.Synonyms {
			if isFormulaSynonym(syn, e.formula) {
				texts = append(texts, syn)
			}
		}
		for _, t := range texts {
			t = compactFormula(t)
			if t == "" || seen[t] {
				continue
			}
			seen[t] = true
			forms = append(forms, form{t, h})
		}
	}
	for _, f := range forms {
		ids := c.byHill[f.hill]
		if isStructural(f.text) {
			c.formulas[f.text] = c.addRes(c.formulaResolution(f.hill, f.text, ids))
			if key, ok := structureKey(f.text); ok {
				c.structs[key] = c.formulas[f.text]
			}
		} else {
			c.formulas[f.text] = c.hills[f.hill]
		}
		// A formula that fits one substance is also accepted in any letter case ("co2").
		if len(ids) == 1 {
			key := normalizeString(f.text)
			if _, taken := c.names[key]; !taken {
				t := target{kind: KindSubstance, idx: ids[0]}
				c.names[key] = int32(len(c.hits))
				c.hits = append(c.hits, nameHit{t: t, res: c.res[c.formulas[f.text]]})
			}
		}
	}
}

// structureOf reports whether text is one of the written structures of substance e.
func structureOf(e *subEntry, text string) bool {
	if compactFormula(e.s.Structure) == text {
		return true
	}
	for _, syn := range e.s.Synonyms {
		if compactFormula(syn) == text && isFormulaSynonym(syn, e.formula) {
			return true
		}
	}
	return false
}

// formulaResolution ranks the substances with Hill formula h; when text is a structure,
// the substances written so rank above their isomers.
func (c *Catalogue) formulaResolution(h, text string, ids []int32) Resolution {
	var r Resolution
	for _, id := range ids {
		e := &c.subs[id]
		cand := c.candidate(target{kind: KindSubstance, idx: id}, MatchFormula, e.s.Formula)
		if text != "" && structureOf(e, text) {
			cand.Score = scoreStructure
			cand.MatchedOn = text
		}
		r.Candidates = append(r.Candidates, cand)
	}
	finishResolution(&r)
	if r.Ambiguous {
		r.Note = fmt.Sprintf("formula %s fits %d catalogue substances (isomers or isomer groups); give the designation or CAS number", h, countTop(r.Candidates))
	}
	return r
}

func (c *Catalogue) addRes(r Resolution) int32 {
	c.res = append(c.res, r)
	return int32(len(c.res) - 1)
}

// indexCAS records CAS Registry Numbers.
func (c *Catalogue) indexCAS() {
	for i := range c.subs {
		s := c.subs[i].s
		if s.CAS == "" {
			continue
		}
		r := Resolution{Candidates: []Candidate{c.candidate(target{kind: KindSubstance, idx: int32(i)}, MatchCAS, s.CAS)}}
		c.cas[s.CAS] = c.addRes(r)
	}
}

// indexHS records the HS subheadings of both editions.
func (c *Catalogue) indexHS() {
	type use struct {
		id       int32
		editions []HSEdition
	}
	codes := map[string][]use{}
	add := func(code string, id int32, ed HSEdition) {
		us := codes[code]
		for k := range us {
			if us[k].id == id {
				us[k].editions = append(us[k].editions, ed)
				return
			}
		}
		codes[code] = append(us, use{id: id, editions: []HSEdition{ed}})
	}
	for i := range c.subs {
		s := c.subs[i].s
		for _, code := range s.HS2017 {
			add(code, int32(i), HS2017)
		}
		for _, code := range s.HS2022 {
			add(code, int32(i), HS2022)
		}
	}
	keys := make([]string, 0, len(codes))
	for k := range codes {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, code := range keys {
		var r Resolution
		editions := map[HSEdition]bool{}
		for _, u := range codes[code] {
			var eds []string
			for _, ed := range u.editions {
				eds = append(eds, string(ed))
				editions[ed] = true
			}
			r.Candidates = append(r.Candidates, c.candidate(target{kind: KindSubstance, idx: u.id}, MatchHSCode, strings.Join(eds, "/")+" "+code))
		}
		finishResolution(&r)
		var notes []string
		shared := false
		for _, ed := range HSEditions() {
			if !editions[ed] {
				continue
			}
			sh, ok := LookupHS(ed, code)
			if !ok {
				shared = true
				notes = append(notes, fmt.Sprintf("%s %s", ed, code))
				continue
			}
			if sh.Shared {
				shared = true
			}
			notes = append(notes, fmt.Sprintf("%s %s %q", ed, code, sh.Text))
		}
		if shared {
			r.Ambiguous = true
		}
		note := strings.Join(notes, "; ") + ": an HS code classifies goods and does not identify a substance"
		if shared {
			note += "; this subheading also covers substances outside the catalogue"
		}
		r.Note = note + "; confirm with the designation or CAS number"
		c.hs[code] = c.addRes(r)
	}
}

// Substance returns the substance with this designation, synonym or chemical name.
func (c *Catalogue) Substance(name string) (*Substance, bool) {
	i, ok := c.lookupName(name)
	if !ok || c.hits[i].t.kind != KindSubstance {
		return nil, false
	}
	return c.subs[c.hits[i].t.idx].s, true
}

// Blend returns the blend with this designation or synonym.
func (c *Catalogue) Blend(name string) (*Blend, bool) {
	i, ok := c.lookupName(name)
	if !ok || c.hits[i].t.kind != KindBlend {
		return nil, false
	}
	return c.blends[c.hits[i].t.idx].b, true
}

// Substances lists the substances in Annex order (uncontrolled last), then by designation.
func (c *Catalogue) Substances() []*Substance { return append([]*Substance(nil), c.subList...) }

// Blends lists the blends by designation.
func (c *Catalogue) Blends() []*Blend { return append([]*Blend(nil), c.blendList...) }

// BlendGroups returns the Annex groups of a blend's controlled components, in Annex order;
// nil for a blend that is not in this catalogue or has no controlled component.
func (c *Catalogue) BlendGroups(b *Blend) []Group {
	if b == nil {
		return nil
	}
	i, ok := c.lookupName(b.Designation)
	if !ok || c.hits[i].t.kind != KindBlend {
		return nil
	}
	return append([]Group(nil), c.blends[c.hits[i].t.idx].groups...)
}

// blendGroups computes the groups of a blend's controlled components.
func (c *Catalogue) blendGroups(b *Blend) []Group {
	var gs []Group
	for _, g := range AllGroups {
		for _, comp := range b.Components {
			s, _ := c.Substance(comp.Designation)
			if s != nil && s.Group == g {
				gs = append(gs, g)
				break
			}
		}
	}
	return gs
}
