package exact

import "strings"

// Unit is what a figure measures. Its row in Units gives the suffix the figure's field name
// carries on the wire and the places it is shown with.
type Unit int

// Units of figures.
const (
	Kg         Unit = iota // mass, kilograms
	Tonnes                 // mass, metric tonnes
	ODPTonnes              // metric tonnes × ODP
	CO2eTonnes             // metric tonnes × GWP (100-year), tonnes CO2-equivalent
	Percent                // mass percent, 0 to 100
	Points                 // mass percent points (tolerances, uncertainties, distances)
	GPerMol                // molar mass, g/mol
	Years                  // atmospheric lifetime
	ODP                    // ozone-depleting potential, dimensionless (CFC-11 = 1)
	GWP                    // 100-year global warming potential, dimensionless (CO2 = 1)
	Ratio                  // a dimensionless ratio such as a score from 0 to 1
)

// UnitSpec is one row of the display table.
type UnitSpec struct {
	Unit   Unit
	Name   string // how the unit is written after a figure in text ("kg", "ODP t")
	Suffix string // the ending of a wire field name that holds it ("_kg", "_odp_tonnes"); "" when the field is named after the quantity itself ("odp", "gwp_100yr")
	// Places is how many decimals the figure is shown with, at most (trailing zeros are
	// dropped); -1 shows the figure in full. Constants the catalogue holds (ODP, GWP) are
	// shown in full: they are what the Annexes and assessments list.
	Places int32
	// DerivedPlaces is how many decimals a figure of this unit keeps when it is derived by
	// division (renormalised shares, averages); sums and products are kept exact.
	DerivedPlaces int32
}

// Units is the one table of display precision; DEVELOPERS.md ("Figures on the wire")
// repeats it and TestUnitsTableInDevelopersGuide keeps the two in step.
var Units = []UnitSpec{
	{Kg, "kg", "_kg", 3, 6},
	{Tonnes, "t", "_tonnes", 3, 9},
	{ODPTonnes, "ODP t", "_odp_tonnes", 4, 9},
	{CO2eTonnes, "t CO2-eq", "_co2e_tonnes", 3, 9},
	{Percent, "%", "_percent", 2, 6},
	{Points, "points", "_points", 2, 6},
	{GPerMol, "g/mol", "_g_per_mol", 3, 6},
	{Years, "years", "_years", 1, 6},
	{ODP, "", "odp", -1, 6},
	{GWP, "", "gwp_100yr", -1, 6},
	{Ratio, "", "", 2, 6},
}

// Spec returns the unit's row of Units.
func (u Unit) Spec() UnitSpec {
	for _, s := range Units {
		if s.Unit == u {
			return s
		}
	}
	return UnitSpec{Unit: u, Places: -1, DerivedPlaces: 6}
}

// Display writes a for a reader: rounded half away from zero to the unit's places,
// trailing zeros dropped, without the unit name ("0.055", "102.03", "1430").
func (a Decimal) Display(u Unit) string {
	p := u.Spec().Places
	if p < 0 {
		return a.String()
	}
	return a.Round(p).String()
}

// DisplayWith writes a rounded for the unit followed by the unit's name: "10 kg", "0.55 ODP t".
func (a Decimal) DisplayWith(u Unit) string {
	n := u.Spec().Name
	if n == "" {
		return a.Display(u)
	}
	if n == "%" {
		return a.Display(u) + " %"
	}
	return a.Display(u) + " " + n
}

// Derive returns a/b rounded to the places the unit keeps for derived figures.
func Derive(a, b Decimal, u Unit) Decimal { return a.DivRound(b, u.Spec().DerivedPlaces) }

// Wire writes a figure for an optional wire field: the exact String when known, "" when not
// (protojson then leaves the field out). A known zero is "0", present.
func Wire(a Decimal, known bool) string {
	if !known {
		return ""
	}
	return a.String()
}

// ParseField reads an optional wire figure: "" is not given (false, nil). Errors name the
// field and say what is accepted.
func ParseField(field, s string) (Decimal, bool, error) {
	if strings.TrimSpace(s) == "" {
		return Zero, false, nil
	}
	d, err := Parse(s)
	if err != nil {
		return Zero, false, &FieldError{Field: field, Err: err}
	}
	return d, true, nil
}

// FieldError says which wire field held an unreadable figure.
type FieldError struct {
	Field string
	Err   error
}

func (e *FieldError) Error() string { return e.Field + ": " + e.Err.Error() }

// Unwrap returns the Parse error (wrapping ErrSyntax).
func (e *FieldError) Unwrap() error { return e.Err }
