package controls

import (
	"fmt"
	"math"
	"strings"

	"github.com/halovet/halovet/substances"
)

// Portion is one blend component's share of a mass.
type Portion struct {
	Designation string  // component designation
	Fraction    float64 // mass fraction, MassPct / 100
	Tonnes      float64 // total × Fraction
}

// compositionTolerance is how far (in mass percent points) nominal shares may sum from 100.
// ASHRAE 34 nominal compositions are exact decimals that sum to 100 (common practice), so
// anything beyond rounding noise is a data error.
const compositionTolerance = 1e-6

// SplitMass splits a blend's mass (metric tonnes) into its components by nominal mass
// percent: each component's mass = total × mass fraction (common practice).
// Consumption of a mixture is counted per controlled component in its own Annex group, so
// callers pass the portions to Calculate as separate records (see also Flows.Scaled).
func SplitMass(tonnes float64, components []substances.Component) ([]Portion, error) {
	if !finiteNonNeg(tonnes) {
		return nil, fieldErr("tonnes", "a finite number of metric tonnes ≥ 0", "is %v", tonnes)
	}
	if len(components) == 0 {
		return nil, fieldErr("components", "at least one component with its mass percent", "is empty")
	}
	seen := map[string]bool{}
	sum := 0.0
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
		if !finite(c.MassPct) || c.MassPct <= 0 || c.MassPct > 100 {
			return nil, fieldErr(f+".mass_pct", "a mass percent > 0 and ≤ 100", "is %v", c.MassPct)
		}
		sum += c.MassPct
	}
	if math.Abs(sum-100) > compositionTolerance {
		return nil, fieldErr("components", "nominal mass percents that sum to 100", "sum to %v", sum)
	}
	out := make([]Portion, len(components))
	for i, c := range components {
		fr := c.MassPct / 100
		out[i] = Portion{Designation: strings.TrimSpace(c.Designation), Fraction: fr, Tonnes: tonnes * fr}
	}
	return out, nil
}
