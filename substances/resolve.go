package substances

import (
	"errors"
	"fmt"
	"slices"
	"sort"
	"strings"
)

// MatchKind says how an identifier matched a catalogue entry.
type MatchKind int

// Kinds of match, strongest first.
const (
	MatchDesignation   MatchKind = iota // the entry's designation, e.g. "HCFC-22", "R-404A"
	MatchSynonym                        // another name of the entry, e.g. "R-22"
	MatchCAS                            // its CAS Registry Number
	MatchFormula                        // its molecular or condensed structural formula
	MatchChemicalName                   // its chemical name
	MatchHSCode                         // an HS subheading that holds it
	MatchDecodedNumber                  // an ASHRAE 34 number decoded to its formula
)

// Scores of the kinds of match: an exact name beats a formula, which beats a decoded number,
// which beats an HS code. A condensed structure (CH2FCF3) ranks above its isomers.
const (
	scoreExact     = 1.0
	scoreName      = 0.95
	scoreStructure = 0.9
	scoreFormula   = 0.8
	scoreDecoded   = 0.7
	scoreHS        = 0.5
)

func (k MatchKind) score() float64 {
	switch k {
	case MatchDesignation, MatchCAS:
		return scoreExact
	case MatchSynonym, MatchChemicalName:
		return scoreName
	case MatchFormula:
		return scoreFormula
	case MatchDecodedNumber:
		return scoreDecoded
	default:
		return scoreHS
	}
}

// matchRank orders kinds when one name is recorded twice for the same entry.
func matchRank(k MatchKind) int {
	switch k {
	case MatchDesignation:
		return 0
	case MatchSynonym:
		return 1
	case MatchChemicalName:
		return 2
	default:
		return 3 + int(k)
	}
}

func (k MatchKind) String() string {
	switch k {
	case MatchDesignation:
		return "designation"
	case MatchSynonym:
		return "synonym"
	case MatchCAS:
		return "CAS number"
	case MatchFormula:
		return "formula"
	case MatchChemicalName:
		return "chemical name"
	case MatchHSCode:
		return "HS code"
	case MatchDecodedNumber:
		return "decoded designation number"
	default:
		return fmt.Sprintf("MatchKind(%d)", int(k))
	}
}

// Candidate is one catalogue entry an identifier may mean.
type Candidate struct {
	Designation string    // designation of the substance or blend
	Kind        Kind      // substance or blend
	Match       MatchKind // how it matched
	Score       float64   // 0..1, higher is a stronger match
	MatchedOn   string    // the catalogue value that matched, e.g. "R-22", "75-45-6", "HS2022 2903.45"
	Group       Group     // Annex group of a substance; empty for blends and uncontrolled substances
}

// Resolution is the outcome of resolving one identifier. Its Candidates slice may be shared
// with the catalogue and must not be modified.
type Resolution struct {
	Candidates  []Candidate // best first
	Ambiguous   bool        // more than one best candidate, or a match that cannot prove identity
	Suggestions []string    // names close to an unknown identifier ("did you mean")
	Note        string      // why the identifier is ambiguous or unknown, in plain words
}

// Unique returns the one best candidate when the identifier is not ambiguous.
func (r Resolution) Unique() (Candidate, bool) {
	if r.Ambiguous || len(r.Candidates) == 0 {
		return Candidate{}, false
	}
	if len(r.Candidates) > 1 && r.Candidates[1].Score >= r.Candidates[0].Score {
		return Candidate{}, false
	}
	return r.Candidates[0], true
}

// finishResolution sorts candidates best first and marks ties at the top as ambiguous.
func finishResolution(r *Resolution) {
	sort.SliceStable(r.Candidates, func(i, j int) bool {
		a, b := r.Candidates[i], r.Candidates[j]
		if a.Score != b.Score {
			return a.Score > b.Score
		}
		if a.Kind != b.Kind {
			return a.Kind < b.Kind
		}
		return naturalLess(a.Designation, b.Designation)
	})
	r.Ambiguous = countTop(r.Candidates) > 1
}

// countTop counts the candidates that share the best score.
func countTop(cs []Candidate) int {
	n := 0
	for _, c := range cs {
		if c.Score == cs[0].Score {
			n++
		}
	}
	return n
}

// Resolve finds the catalogue entries an identifier may mean: a designation in any common
// spelling ("R-22", "R22", "hcfc 22", "404a"), a synonym or chemical name, a CAS Registry
// Number, a molecular or structural formula, an HS subheading, or an ASHRAE 34 number that
// decodes to the formula of a catalogue entry. Exact names are answered from precomputed
// results. An unknown identifier yields suggestions and a note, never a guess; a CAS number
// with a wrong check digit yields no candidate and a note giving the right digit.
func (c *Catalogue) Resolve(identifier string) Resolution {
	s := strings.TrimSpace(identifier)
	if s == "" {
		return Resolution{Note: "empty identifier: give a designation (R-22, HCFC-22, R-404A), CAS number, formula or HS code"}
	}
	if i, ok := c.lookupName(s); ok {
		return c.hits[i].res
	}
	if i, ok := c.cas[s]; ok {
		return c.res[i]
	}
	if v, ok := c.slow.Load(s); ok {
		return v.(Resolution)
	}
	r := c.resolveSlow(s)
	if c.slowN.Load() < maxCachedResolutions {
		if _, loaded := c.slow.LoadOrStore(strings.Clone(s), r); !loaded {
			c.slowN.Add(1)
		}
	}
	return r
}

// maxCachedResolutions bounds the cache of identifiers that needed more than a name lookup
// (typos, formulas written another way, HS codes, decoded numbers). Batches repeat the same
// identifiers, so the cache turns their cost into one lookup; once full it stops growing.
const maxCachedResolutions = 10000

// resolveSlow resolves an identifier that is not an exact name or CAS number.
func (c *Catalogue) resolveSlow(s string) Resolution {
	if len(s) > maxIdentifierLen {
		return Resolution{Note: fmt.Sprintf("identifier of %d bytes is longer than the %d accepted; give a designation, CAS number, formula or HS code", len(s), maxIdentifierLen)}
	}
	if looksLikeCAS(s) {
		return c.resolveCAS(s)
	}
	if looksLikeHS(s) {
		return c.resolveHS(s)
	}
	if i, ok := c.formulas[compactFormula(s)]; ok {
		return c.res[i]
	}
	if isStructural(s) {
		if key, ok := structureKey(s); ok {
			if i, ok := c.structs[key]; ok {
				return c.res[i]
			}
		}
	}
	if f, err := ParseFormula(s); err == nil {
		return c.resolveFormula(s, f)
	}
	if d, err := ParseDesignation(s); err == nil {
		return c.resolveDecoded(s, d)
	} else if errors.Is(err, ErrNotSingleCompound) {
		r := c.unknown(s)
		r.Note = fmt.Sprintf("%q is a blend or 600/700-series designation that is not in the catalogue", s)
		return r
	}
	return c.unknown(s)
}

// maxIdentifierLen bounds the identifiers Resolve parses; the longest catalogue names are
// about 60 bytes.
const maxIdentifierLen = 200

// looksLikeCAS reports whether s has the CAS layout digits-digits-digit.
func looksLikeCAS(s string) bool {
	var lens [3]int
	part := 0
	for i := 0; i < len(s); i++ {
		switch c := s[i]; {
		case isDigit(c):
			lens[part]++
		case c == '-' && part < 2:
			part++
		default:
			return false
		}
	}
	return part == 2 && lens[0] > 0 && lens[1] == 2 && lens[2] == 1
}

// looksLikeHS reports whether s is made of digits, dots and spaces with at least four digits.
func looksLikeHS(s string) bool {
	digits := 0
	for i := 0; i < len(s); i++ {
		switch c := s[i]; {
		case isDigit(c):
			digits++
		case c == '.' || c == ' ':
		default:
			return false
		}
	}
	return digits >= 4
}

func (c *Catalogue) resolveCAS(s string) Resolution {
	n, err := ParseCAS(s)
	var ce *CASCheckError
	switch {
	case errors.As(err, &ce):
		r := Resolution{Note: fmt.Sprintf("CAS Registry Number %s has a wrong check digit: the digits before it give %d, not %d; check the number on the documents", s, ce.Want, ce.Got)}
		fixed := s[:len(s)-1] + fmt.Sprint(ce.Want)
		if i, ok := c.cas[fixed]; ok {
			r.Suggestions = []string{fixed + " (" + c.res[i].Candidates[0].Designation + ")"}
		}
		return r
	case err != nil:
		return Resolution{Note: fmt.Sprintf("%q is not a valid CAS Registry Number: %v", s, err)}
	}
	if i, ok := c.cas[n]; ok {
		return c.res[i]
	}
	return Resolution{Note: fmt.Sprintf("no catalogue substance has CAS Registry Number %s", n)}
}

func (c *Catalogue) resolveHS(s string) Resolution {
	code, err := NormalizeHS(s)
	if err != nil {
		return Resolution{Note: fmt.Sprintf("%q is not a valid HS code: %v", s, err)}
	}
	if i, ok := c.hs[code]; ok {
		return c.res[i]
	}
	var texts []string
	for _, ed := range HSEditions() {
		if sh, ok := LookupHS(ed, code); ok {
			texts = append(texts, fmt.Sprintf("%s %s %q", ed, code, sh.Text))
		}
	}
	if len(texts) == 0 {
		return Resolution{Note: fmt.Sprintf("HS code %s is not a subheading this catalogue knows", code)}
	}
	return Resolution{Note: strings.Join(texts, "; ") + ": no catalogue substance is classified there"}
}

// resolveFormula handles a formula that is not written as in the catalogue, e.g. "CHF2Cl"
// or "CF3CH2F".
func (c *Catalogue) resolveFormula(s string, f Formula) Resolution {
	h := f.Hill()
	i, ok := c.hills[h]
	if !ok {
		return Resolution{Note: fmt.Sprintf("formula %s (Hill %s) fits no catalogue substance", s, h)}
	}
	r := c.res[i]
	if !isStructural(s) || len(r.Candidates) < 2 {
		return r
	}
	// A structure written another way round: find its designation.
	des, err := EncodeDesignation(s)
	if err != nil {
		return r
	}
	d, err := ParseDesignation(des)
	if err != nil {
		return r
	}
	var out Resolution
	for _, cand := range r.Candidates {
		e := c.subEntryFor(cand.Designation)
		if e != nil && e.s.IsomerCount == 1 && e.decoded && sameIsomer(e.isomer, d.Isomer) {
			cand.Score = scoreStructure
			cand.MatchedOn = s + " = " + des
		}
		out.Candidates = append(out.Candidates, cand)
	}
	finishResolution(&out)
	if out.Ambiguous {
		out.Note = r.Note
	}
	return out
}

// subEntryFor finds a substance entry by its designation.
func (c *Catalogue) subEntryFor(designation string) *subEntry {
	i, ok := c.lookupName(designation)
	if !ok || c.hits[i].t.kind != KindSubstance {
		return nil
	}
	return &c.subs[c.hits[i].t.idx]
}

// resolveDecoded handles an ASHRAE 34 or halon number that is not a catalogue name, such as
// "R-123a" or "halon-1202": entries with the decoded formula are candidates when they cover
// that isomer.
func (c *Catalogue) resolveDecoded(s string, d Designation) Resolution {
	h := d.Formula.Hill()
	halon := strings.EqualFold(d.Prefix, "halon")
	noSuffixC3 := d.Isomer == "" && d.Formula.Count("C") >= 3
	var r Resolution
	var others []string
	for _, id := range c.byHill[h] {
		e := &c.subs[id]
		covers := halon || noSuffixC3 || e.s.IsomerCount > 1 || (e.decoded && sameIsomer(e.isomer, d.Isomer))
		if !covers {
			others = append(others, e.s.Designation)
			continue
		}
		cand := c.candidate(target{kind: KindSubstance, idx: id}, MatchDecodedNumber, s+" → "+h)
		r.Candidates = append(r.Candidates, cand)
	}
	if len(r.Candidates) == 0 {
		r = c.unknown(s)
		if len(others) > 0 {
			r.Note = fmt.Sprintf("%s decodes to %s; the catalogue holds only other isomers of that formula: %s", s, h, strings.Join(others, ", "))
		} else {
			r.Note = fmt.Sprintf("%s decodes to %s, which fits no catalogue substance", s, h)
		}
		return r
	}
	finishResolution(&r)
	note := fmt.Sprintf("%s is not a catalogue name; decoded by the ASHRAE 34 numbering rule to %s", s, h)
	if len(r.Candidates) == 1 && r.Candidates[0].Designation != "" {
		if e := c.subEntryFor(r.Candidates[0].Designation); e != nil && e.s.IsomerCount > 1 {
			note += fmt.Sprintf(", an isomer covered by the entry %s", e.s.Designation)
		}
	}
	if len(r.Candidates) == 1 && !strings.Contains(d.Isomer, "(") {
		if e := c.subEntryFor(r.Candidates[0].Designation); e != nil && strings.Contains(e.isomer, "(") {
			note += fmt.Sprintf("; the stereoisomer is not given and the catalogue holds only %s", e.s.Designation)
		}
	}
	if halon {
		note += "; halon numbers do not distinguish isomers"
	}
	if noSuffixC3 && !halon {
		note += "; without isomer letters a propane-series number does not name one compound"
	}
	r.Note = note
	return r
}

// unknown answers an identifier that matches nothing, with suggestions.
func (c *Catalogue) unknown(s string) Resolution {
	r := Resolution{Suggestions: c.suggestions(s), Note: "no catalogue entry has this name, number or formula"}
	if len(r.Suggestions) > 0 {
		r.Note += "; see the suggestions"
	}
	return r
}

// structureKey canonicalizes a linear condensed structure such as CF3CH2F: its carbon
// groups, each written in Hill order, read from whichever end gives the smaller key, so that
// CF3CH2F, CH2FCF3 and CH2F-CF3 share one key. ok is false for branched, ring or unsaturated
// structures and for texts that are not a chain of at least two carbon groups.
func structureKey(s string) (string, bool) {
	if strings.ContainsAny(s, "()=#") || strings.HasPrefix(s, "c-") {
		return "", false
	}
	var groups []string
	start := -1
	for i := 0; i <= len(s); i++ {
		carbon := i < len(s) && s[i] == 'C' && (i+1 == len(s) || s[i+1] < 'a' || s[i+1] > 'z')
		if i == len(s) || carbon {
			if start >= 0 {
				f, err := ParseFormula(strings.TrimRight(s[start:i], "- "))
				if err != nil || f.Count("C") != 1 {
					return "", false
				}
				groups = append(groups, f.Hill())
			} else if i > 0 && strings.TrimSpace(s[:i]) != "" {
				return "", false // text before the first carbon
			}
			start = i
		}
	}
	if len(groups) < 2 {
		return "", false
	}
	fwd := strings.Join(groups, "|")
	slices.Reverse(groups)
	if rev := strings.Join(groups, "|"); rev < fwd {
		return rev, true
	}
	return fwd, true
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
