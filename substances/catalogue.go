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
	// Numbered ASHRAE 34 blends first, in number order, then the mixtures without a number.
	sort.SliceStable(bcopies, func(i, j int) bool {
		if mi, mj := bcopies[i].Type == BlendMixture, bcopies[j].Type == BlendMixture; mi != mj {
			return mj
		}
		return naturalLess(bcopies[i].Designation, bcopies[j].Designation)
	})
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

// SubstanceBefore reports whether a substance of group ga and designation da comes before
// one of group gb and designation db in the order Substances lists them (Annex order,
// uncontrolled last, then by designation). Keyset pages over the catalogue use it to go on
// after a row that may since have left the catalogue.
func SubstanceBefore(ga Group, da string, gb Group, db string) bool {
	if ra, rb := groupRank(ga), groupRank(gb); ra != rb {
		return ra < rb
	}
	return naturalLess(da, db)
}

// BlendBefore is SubstanceBefore for blends, in the order Blends lists them: numbered
// ASHRAE 34 blends first, then mixtures without a number (mixture set), each by
// designation.
func BlendBefore(mixtureA bool, da string, mixtureB bool, db string) bool {
	if mixtureA != mixtureB {
		return mixtureB
	}
	return naturalLess(da, db)
}
