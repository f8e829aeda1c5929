package validate

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"github.com/halovet/halovet/substances"
)

// compositionTolerance is how far the declared shares may sum from 100 mass %.
const compositionTolerance = 0.01

// tolEpsilon absorbs binary rounding when a declared share sits exactly on a tolerance limit.
const tolEpsilon = 1e-9

// mixtureRules checks a declared composition: every component resolves to one substance, the
// shares are in range and sum to 100, and, for a named blend, the components are the blend's
// and each share lies within the blend's ASHRAE 34 tolerance. It returns the shares for the
// evaluation of an ad-hoc composition.
func (c *checker) mixtureRules() ([]substances.Share, bool) {
	decl := c.r.Composition
	if len(decl) == 0 {
		return nil, false
	}
	cat := c.env.Catalogue
	shares := make([]substances.Share, 0, len(decl))
	positions := make([]int, 0, len(decl)) // component number of each share
	var repeated []string                  // designations listed more than once
	ok := true
	pctOK := true
	sum := 0.0
	for i, d := range decl {
		id := strings.TrimSpace(d.Identifier)
		if math.IsNaN(d.MassPct) || d.MassPct <= 0 || d.MassPct > 100 {
			c.add(CodeMixShareInvalid, "", "component %d (%s): mass percent %g is not above 0 and at most 100", i+1, cutText(id), d.MassPct)
			ok, pctOK = false, false
		} else {
			sum += d.MassPct
		}
		if len(id) > maxIdentifierBytes {
			c.add(CodeMixComponentUnknown, "", "component %d: the identifier is %d bytes long; up to %d bytes are looked up", i+1, len(id), maxIdentifierBytes)
			ok = false
			continue
		}
		res := cat.Resolve(id)
		cand, uniq := res.Unique()
		switch {
		case !uniq && len(res.Candidates) == 0:
			msg := fmt.Sprintf("component %d: %q matches no catalogue substance%s", i+1, cutText(id), noteSuffix(res.Note))
			if len(res.Suggestions) > 0 {
				msg += "; did you mean: " + strings.Join(res.Suggestions, ", ") + "?"
			}
			c.add(CodeMixComponentUnknown, "", "%s", msg)
			ok = false
			continue
		case !uniq:
			c.add(CodeMixComponentUnknown, "", "component %d: %q may mean %s", i+1, cutText(id), candidateList(res.Candidates))
			ok = false
			continue
		case cand.Kind != substances.KindSubstance:
			c.add(CodeMixComponentUnknown, "", "component %d: %q is the blend %s; list the substances it is made of", i+1, cutText(id), cand.Designation)
			ok = false
			continue
		}
		if at := slices.IndexFunc(shares, func(s substances.Share) bool { return s.Identifier == cand.Designation }); at >= 0 {
			// One finding per repeated substance, whatever the number of repeats.
			if !slices.Contains(repeated, cand.Designation) {
				repeated = append(repeated, cand.Designation)
				c.add(CodeMixComponentMismatch, "", "component %d: %s is listed already (component %d); list each substance once", i+1, cand.Designation, positions[at])
			}
			ok = false
			continue
		}
		shares = append(shares, substances.Share{Identifier: cand.Designation, MassPct: d.MassPct})
		positions = append(positions, i+1)
	}
	if pctOK && math.Abs(sum-100) > compositionTolerance {
		c.add(CodeMixSum, "", "the declared mass percents sum to %s %%; they must sum to 100 %% ± %g", trimFloat(sum), compositionTolerance)
		ok = false
	}
	if !ok {
		return nil, false
	}
	switch {
	case c.blend != nil:
		c.blendComposition(shares)
	case c.sub != nil:
		if len(shares) != 1 || shares[0].Identifier != c.sub.Designation {
			c.add(CodeMixComponentMismatch, "", "the declared composition (%s) is not %s alone; a single substance is declared as itself at 100 %%", shareList(shares), c.sub.Designation)
		}
	}
	return shares, true
}

// blendComposition compares declared shares with a standard blend's nominal composition.
func (c *checker) blendComposition(shares []substances.Share) {
	b := c.blend
	var missing, extra []string
	for _, comp := range b.Components {
		found := false
		for _, s := range shares {
			if s.Identifier == comp.Designation {
				found = true
				break
			}
		}
		if !found {
			missing = append(missing, comp.Designation)
		}
	}
	for _, s := range shares {
		found := false
		for _, comp := range b.Components {
			if s.Identifier == comp.Designation {
				found = true
				break
			}
		}
		if !found {
			extra = append(extra, s.Identifier)
		}
	}
	if len(missing)+len(extra) > 0 {
		var parts []string
		if len(missing) > 0 {
			parts = append(parts, "lacks "+strings.Join(missing, ", "))
		}
		if len(extra) > 0 {
			parts = append(parts, "names "+strings.Join(extra, ", ")+", which "+b.Designation+" does not contain")
		}
		c.add(CodeMixComponentMismatch, "", "the declared composition of %s %s; %s is %s", b.Designation, strings.Join(parts, " and "), b.Designation, nominalList(b))
		return
	}
	for _, comp := range b.Components {
		for _, s := range shares {
			if s.Identifier != comp.Designation {
				continue
			}
			lo, hi := comp.MassPct-comp.TolMinus, comp.MassPct+comp.TolPlus
			if s.MassPct < lo-tolEpsilon || s.MassPct > hi+tolEpsilon {
				c.add(CodeMixOutOfTolerance, "", "%s in %s: declared %s %%, allowed %s to %s %% (nominal %s +%s/-%s, ASHRAE 34 tolerance)",
					comp.Designation, b.Designation, trimFloat(s.MassPct), trimFloat(lo), trimFloat(hi),
					trimFloat(comp.MassPct), trimFloat(comp.TolPlus), trimFloat(comp.TolMinus))
			}
		}
	}
}

func nominalList(b *substances.Blend) string {
	parts := make([]string, len(b.Components))
	for i, comp := range b.Components {
		parts[i] = fmt.Sprintf("%s %s %%", comp.Designation, trimFloat(comp.MassPct))
	}
	return strings.Join(parts, ", ")
}

func shareList(shares []substances.Share) string {
	parts := make([]string, len(shares))
	for i, s := range shares {
		parts[i] = fmt.Sprintf("%s %s %%", s.Identifier, trimFloat(s.MassPct))
	}
	return strings.Join(parts, ", ")
}

// trimFloat prints a float with up to 6 decimals and no trailing zeros.
func trimFloat(f float64) string {
	s := fmt.Sprintf("%.6f", f)
	s = strings.TrimRight(s, "0")
	return strings.TrimSuffix(s, ".")
}
