package controls

import (
	"fmt"
	"strings"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
)

// Portion is one blend component's share of a mass.
type Portion struct {
	Designation string        // component designation
	Fraction    exact.Decimal // mass fraction, MassPct / 100, exact
	Tonnes      exact.Decimal // total × Fraction, exact
}

// compositionTolerance is how far (in mass percent points) nominal shares may sum from 100.
// ASHRAE 34 nominal compositions are exact decimals that sum to 100 (common practice), so
// anything beyond rounding noise is a data error.
var compositionTolerance = exact.MustParse("0.000001")

// SplitMass splits a blend's mass (metric tonnes) into its components by nominal mass
// percent: each component's mass = total × mass fraction (common practice).
// Consumption of a mixture is counted per controlled component in its own Annex group, so
// callers pass the portions to Calculate as separate records (see also Flows.Scaled).
//
// The catalogue's mass percents are the decimals ASHRAE 34 lists, read with exact.OfFloat
// (see SubstanceOf); the portions are exact products.
func SplitMass(tonnes exact.Decimal, components []substances.Component) ([]Portion, error) {
	if !nonNeg(tonnes) {
		return nil, fieldErr("tonnes", "a number of metric tonnes ≥ 0", "is %v", tonnes)
	}
	if len(components) == 0 {
		return nil, fieldErr("components", "at least one component with its mass percent", "is empty")
	}
	seen := map[string]bool{}
	sum := exact.Zero
	for i, c := range components {
		f := fmt.Sprintf("components[%d]", i)
		d := strings.TrimSpace(c.Designation)
		if d == "" {
			return nil, fieldErr(f+".designation", "a catalogue designation such as \"HFC-125\"", "is empty")
		}
		if seen[d] {
			return nil, fieldErr(f+".designation", "each component once", "%s appears twice", d)
		}
		seen[d] = true
		pct, ok := exact.FromFloat(c.MassPct)
		if !ok || pct.Sign() <= 0 || pct.Cmp(exact.Hundred) > 0 {
			return nil, fieldErr(f+".mass_pct", "a mass percent > 0 and ≤ 100", "is %v", c.MassPct)
		}
		sum = sum.Add(pct)
	}
	if sum.Sub(exact.Hundred).Abs().Cmp(compositionTolerance) > 0 {
		return nil, fieldErr("components", "nominal mass percents that sum to 100", "sum to %v", sum)
	}
	out := make([]Portion, len(components))
	for i, c := range components {
		fr := exact.OfFloat(c.MassPct).Shift(-2)
		out[i] = Portion{Designation: strings.TrimSpace(c.Designation), Fraction: fr, Tonnes: tonnes.Mul(fr)}
	}
	return out, nil
}
