package substances

import (
	"io/fs"
	"math"
	"strings"
)

// The rows of blends.csv: type and series, components that are seeded substances, mass
// shares summing to 100 % and tolerances, safety class and sources.

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
	b.Type = BlendType(t.get("type"))
	switch {
	case b.Type != BlendZeotrope && b.Type != BlendAzeotrope && b.Type != BlendMixture:
		return b, t.fail("type", "%q: use zeotrope, azeotrope or mixture", b.Type)
	case strings.HasPrefix(b.Designation, "R-4") && b.Type != BlendZeotrope,
		strings.HasPrefix(b.Designation, "R-5") && b.Type != BlendAzeotrope:
		return b, t.fail("type", "ASHRAE 34 numbers zeotropes in the 400 series and azeotropes in the 500 series")
	case strings.HasPrefix(b.Designation, "R-") && b.Type == BlendMixture:
		return b, t.fail("type", "a mixture without an ASHRAE 34 number must not be named R-; use zeotrope or azeotrope for a numbered blend")
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
