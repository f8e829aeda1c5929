package substances

import (
	"io/fs"
	"strconv"
	"strings"
)

// The rows of annex.csv and components.csv: each substance's identity, formula and
// values, checked against each other and against the Annex group.

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
