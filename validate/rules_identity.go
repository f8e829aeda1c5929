package validate

import (
	"errors"
	"fmt"
	"slices"
	"strings"

	"github.com/halovet/halovet/substances"
)

// hs2022Start is the day HS 2022 replaced HS 2017 (WCO; from memory, not checked against a
// stored copy of the WCO notice).
var hs2022Start = date(2022, 1, 1)

// maxIdentifierBytes bounds the text sent to the resolver; no designation, chemical name or
// CAS number of the catalogue comes near it.
const maxIdentifierBytes = 256

// identity resolves the declared substance to exactly one catalogue entry.
func (c *checker) identity() {
	s := strings.TrimSpace(c.r.Substance)
	if s == "" {
		if len(c.r.Composition) == 0 {
			c.add(CodeSubstMissing, "", "substance is empty and no composition is declared; give a designation (e.g. HCFC-22, R-404A), a chemical name or a CAS number")
			return
		}
		c.adHoc = true
		return
	}
	if len(s) > maxIdentifierBytes {
		c.add(CodeSubstUnknown, "", "substance is %d bytes long; identifiers of up to %d bytes are looked up", len(s), maxIdentifierBytes)
		return
	}
	cat := c.env.Catalogue
	res := cat.Resolve(s)
	cand, ok := res.Unique()
	if !ok {
		if len(res.Candidates) == 0 {
			msg := fmt.Sprintf("%q matches no catalogue substance or blend", cutText(s))
			if res.Note != "" {
				msg += " (" + res.Note + ")"
			}
			if len(res.Suggestions) > 0 {
				msg += "; did you mean: " + strings.Join(res.Suggestions, ", ") + "?"
			}
			c.add(CodeSubstUnknown, "", "%s", msg)
			return
		}
		c.add(CodeSubstAmbiguous, "", "%q may mean %s%s; declare the designation or CAS number of one of them",
			cutText(s), candidateList(res.Candidates), noteSuffix(res.Note))
		return
	}
	switch cand.Match {
	case substances.MatchFormula, substances.MatchDecodedNumber, substances.MatchHSCode:
		c.add(CodeSubstLooseMatch, "", "%q was read as %s by its %s (%s); declaring the designation avoids the guess",
			cutText(s), cand.Designation, cand.Match, cand.MatchedOn)
	}
	c.designation, c.kind = cand.Designation, cand.Kind
	switch cand.Kind {
	case substances.KindSubstance:
		c.sub, _ = cat.Substance(cand.Designation)
	case substances.KindBlend:
		c.blend, _ = cat.Blend(cand.Designation)
	}
}

func candidateList(cs []substances.Candidate) string {
	const max = 8
	parts := make([]string, 0, min(len(cs), max))
	for i, cd := range cs {
		if i == max {
			parts = append(parts, fmt.Sprintf("and %d more", len(cs)-max))
			break
		}
		parts = append(parts, fmt.Sprintf("%s (by %s %s)", cd.Designation, cd.Match, cd.MatchedOn))
	}
	return strings.Join(parts, ", ")
}

func noteSuffix(note string) string {
	if note == "" {
		return ""
	}
	return " (" + note + ")"
}

// isMixture reports whether the record is a blend or an ad-hoc composition.
func (c *checker) isMixture() bool { return c.blend != nil || c.adHoc }

// casRule checks the declared CAS number's check digit and that it belongs to the substance.
func (c *checker) casRule() {
	s := strings.TrimSpace(c.r.CAS)
	if s == "" {
		return
	}
	if c.sub != nil && s == c.sub.CAS {
		return // the catalogue's own number: valid and matching
	}
	norm, err := substances.ParseCAS(s)
	if err != nil {
		var ce *substances.CASCheckError
		if errors.As(err, &ce) {
			c.add(CodeCASCheckDigit, "", "CAS Registry Number %s: the check digit is %d, but the digits before it give %d (published CAS check-digit method)", cutText(s), ce.Got, ce.Want)
		} else {
			c.add(CodeCASFormat, "", "declared_cas_number: %v", err)
		}
		return
	}
	if c.isMixture() {
		c.add(CodeCASNotApplicable, "", "CAS Registry Number %s is declared for %s, a mixture; blends have no CAS number of their own", norm, c.mixtureName())
		return
	}
	if c.sub == nil {
		return
	}
	if c.sub.CAS == norm {
		return
	}
	owner := ""
	if cand, ok := c.env.Catalogue.Resolve(norm).Unique(); ok {
		owner = cand.Designation
	}
	switch {
	case c.sub.CAS == "" && owner == "":
		c.add(CodeCASUnverified, "", "%s is a treaty isomer group without a single CAS number, and %s is no catalogued isomer; only its check digit was verified", c.sub.Designation, norm)
	case c.sub.CAS == "" && owner == c.sub.Designation:
		// The number is one the catalogue files under this group.
	case owner != "":
		c.add(CodeCASMismatch, "", "CAS Registry Number %s belongs to %s, not to the declared %s%s", norm, owner, c.sub.Designation, casExpect(c.sub))
	default:
		c.add(CodeCASMismatch, "", "CAS Registry Number %s is not the number of %s%s", norm, c.sub.Designation, casExpect(c.sub))
	}
}

func casExpect(s *substances.Substance) string {
	if s.CAS == "" {
		return ""
	}
	return " (" + s.CAS + ")"
}

func (c *checker) mixtureName() string {
	if c.blend != nil {
		return c.blend.Designation
	}
	return "a declared composition"
}

// hsRule checks the declared HS code against the substance's subheadings, or the mixture's
// classification in heading 38.27 (HS 2022) and 3824.71-.79 (HS 2017).
func (c *checker) hsRule() {
	s := strings.TrimSpace(c.r.HSCode)
	if s == "" {
		return
	}
	code := s
	if !isSubheading(s) {
		var err error
		if code, err = substances.NormalizeHS(s); err != nil {
			c.add(CodeHSFormat, "", "declared_hs_code: %v", err)
			return
		}
	}
	if c.hsKindRule(code) {
		return
	}
	var want17, want22 []string
	name := c.designation
	switch {
	case c.sub != nil:
		want17, want22 = c.sub.HS2017, c.sub.HS2022
	case c.isMixture() && c.evOK:
		want17, want22 = fieldList(c.ev.HS2017), fieldList(c.ev.HS2022)
		if len(want17) == 0 && len(want22) == 0 {
			c.add(CodeHSMixtureUnknown, "", "the HS subheading of %s could not be determined%s; the declared %s was not checked", name, noteSuffix(c.ev.HSNote), code)
			return
		}
	default:
		return
	}
	in17, in22 := slices.Contains(want17, code), slices.Contains(want22, code)
	if !in17 && !in22 {
		// A mixture whose code is unknown in one edition may be right under that edition.
		if c.isMixture() {
			_, known17 := substances.LookupHS(substances.HS2017, code)
			_, known22 := substances.LookupHS(substances.HS2022, code)
			if (len(want17) == 0 && known17) || (len(want22) == 0 && known22) {
				c.add(CodeHSMixtureUnknown, "", "the HS subheading of %s could not be determined in every edition%s; the declared %s was not checked", name, noteSuffix(c.ev.HSNote), code)
				return
			}
		}
		c.add(CodeHSMismatch, "", "HS %s is not a subheading of %s; accepted: %s", code, name, hsExpect(want22, want17))
		return
	}
	fits := substances.HS2022
	if c.dateOK {
		inForce, other := substances.HS2017, substances.HS2022
		inForceCodes, fitsInForce := want17, in17
		if !c.date.Before(hs2022Start) {
			inForce, other = substances.HS2022, substances.HS2017
			inForceCodes, fitsInForce = want22, in22
		}
		fits = inForce
		if !fitsInForce {
			fits = other
			switch {
			case len(inForceCodes) > 0:
				c.add(CodeHSEdition, "", "%s is the %s subheading of %s; on %s %s is in force and classifies it in %s",
					code, other, name, isoDate(c.date), inForce, strings.Join(inForceCodes, " or "))
			case c.isMixture() && c.evOK:
				c.add(CodeHSEdition, "", "%s is the %s subheading of %s; on %s %s is in force, and its subheading for this mixture is not decided%s",
					code, other, name, isoDate(c.date), inForce, noteSuffix(c.ev.HSNote))
			}
		}
	} else if !in22 {
		fits = substances.HS2017
	}
	shared := false
	if sh, ok := substances.LookupHS(fits, code); ok && sh.Shared {
		shared = true
	}
	if c.sub != nil && c.env.hsCount[hsKey{fits, code}] > 1 {
		shared = true
	}
	if shared {
		c.add(CodeHSShared, "", "%s %s fits %s but also holds other goods; the code alone does not prove identity", fits, code, name)
	}
}

// isMixtureSubheading reports whether code is one of the mixture subheadings for halogenated
// derivatives of methane, ethane or propane: HS 2022 heading 38.27, HS 2017 3824.71-3824.79.
func isMixtureSubheading(code string) bool {
	return strings.HasPrefix(code, "3827.") || (code >= "3824.71" && code <= "3824.79")
}

// hsKindRule reports a subheading of heading 29.03 (halogenated derivatives of hydrocarbons,
// which holds separate chemically defined compounds: HS Chapter 29 Note 1(a)) declared for a
// mixture, or a mixture subheading declared for a single substance. It reports whether it
// added a finding.
func (c *checker) hsKindRule(code string) bool {
	switch {
	case c.isMixture() && strings.HasPrefix(code, "2903."):
		want := "the mixture subheadings of heading 38.27 (HS 2022)"
		if c.evOK && c.ev.HS2022 != "" {
			want = strings.Join(fieldList(c.ev.HS2022), " or ") + " (HS 2022)"
			if c.ev.HS2017 != "" {
				want += ", " + strings.Join(fieldList(c.ev.HS2017), " or ") + " (HS 2017)"
			}
		}
		what := ""
		if sh, ok := substances.LookupHS(substances.HS2022, code); ok {
			what = " (" + sh.Text + ")"
		}
		c.add(CodeHSKind, "", "HS %s%s is a subheading for a single substance, but %s is a mixture; declare %s", code, what, c.mixtureName(), want)
		return true
	case c.sub != nil && isMixtureSubheading(code):
		c.add(CodeHSKind, "", "HS %s is a mixture subheading, but %s is a single substance; declare %s", code, c.sub.Designation, hsExpect(c.sub.HS2022, c.sub.HS2017))
		return true
	}
	return false
}

// isSubheading reports whether s is already written "NNNN.NN", the catalogue's form.
func isSubheading(s string) bool {
	if len(s) != 7 || s[4] != '.' {
		return false
	}
	for i := 0; i < 7; i++ {
		if i != 4 && (s[i] < '0' || s[i] > '9') {
			return false
		}
	}
	return true
}

// fieldList splits a space-separated list of codes; one code costs no split.
func fieldList(s string) []string {
	switch {
	case s == "":
		return nil
	case strings.IndexByte(s, ' ') < 0:
		return []string{s}
	}
	return strings.Fields(s)
}

func hsExpect(want22, want17 []string) string {
	var parts []string
	if len(want22) > 0 {
		parts = append(parts, strings.Join(want22, " or ")+" (HS 2022)")
	}
	if len(want17) > 0 {
		parts = append(parts, strings.Join(want17, " or ")+" (HS 2017)")
	}
	if len(parts) == 0 {
		return "none recorded in the catalogue"
	}
	return strings.Join(parts, ", ")
}

// formulaRule checks a declared formula against the substance's.
func (c *checker) formulaRule() {
	s := strings.TrimSpace(c.r.Formula)
	if s == "" {
		return
	}
	if c.isMixture() {
		c.add(CodeFormulaNotApplic, "", "a formula is declared for %s, a mixture; blends have no formula", c.mixtureName())
		return
	}
	if c.sub == nil {
		return
	}
	if s == c.sub.Formula || (s == c.sub.Structure && s != "") {
		return // written as the catalogue writes it
	}
	got, err := substances.ParseFormula(s)
	if err != nil {
		c.add(CodeFormulaFormat, "", "declared_formula %q: %v", cutText(s), err)
		return
	}
	want, ok := c.env.formula(c.sub)
	if !ok {
		return
	}
	if !got.Equal(want) {
		c.add(CodeFormulaMismatch, "", "declared formula %s (%s) is not the formula of %s (%s)", cutText(s), got.Hill(), c.sub.Designation, want.Hill())
	}
}
