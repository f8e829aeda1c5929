package service

import (
	"fmt"
	"math"

	"github.com/halovet/halovet/exact"
)

// Figures on the wire (DEVELOPERS.md): decimal strings, zero present as "0", unknown
// absent. These helpers turn the domain's figures into that form and read request figures.

// stored writes a figure the catalogue holds as written (ODP, GWP, a share, a tolerance):
// the float64 is read back as the shortest decimal that gives it, which is the decimal the
// source lists.
func stored(f float64) string { return exact.OfFloat(f).String() }

// storedKnown is stored, or "" when the figure is not known.
func storedKnown(f float64, known bool) string {
	if !known {
		return ""
	}
	return stored(f)
}

// derived writes a figure the domain derives in float64 by division or a square root
// (renormalised shares, band edges, distances, scores): rounded to the places exact.Points
// keeps for derived figures.
func derived(f float64) string {
	return exact.OfFloat(f).Round(exact.Points.Spec().DerivedPlaces).String()
}

// maxFigureDigits is the most significant digits a request figure may carry: a float64
// holds 15 exactly, and the domain still stores inputs as float64.
const maxFigureDigits = 15

// figureIn reads an optional request figure named field: "" is 0. It adds a violation and
// returns 0 for an unreadable figure, a negative one or one with more digits than are kept.
func figureIn(field, s string, vs *[]fieldViolation) (exact.Decimal, float64) {
	d, f := figureSigned(field, s, vs)
	if d.Sign() < 0 {
		*vs = append(*vs, fieldViolation{field, fmt.Sprintf("%s is negative; give 0 or more", d)})
		return exact.Zero, 0
	}
	return d, f
}

// figureSigned is figureIn without the sign check, for figures whose range the domain
// checks and explains (the shares of a cylinder reading).
func figureSigned(field, s string, vs *[]fieldViolation) (exact.Decimal, float64) {
	d, ok, err := exact.ParseField(field, s)
	if err != nil {
		*vs = append(*vs, fieldViolation{field, fmt.Sprintf("%q is not a decimal; give the figure as a decimal string in plain notation, e.g. \"12.5\" or \"0\" (no exponent, no separators)", s)})
		return exact.Zero, 0
	}
	if !ok {
		return exact.Zero, 0
	}
	f := d.Float64()
	if !exact.OfFloat(f).Equal(d) {
		*vs = append(*vs, fieldViolation{field, fmt.Sprintf("%s has more digits than are kept; give at most %d significant digits", d, maxFigureDigits)})
		return exact.Zero, 0
	}
	return d, f
}

// wireFloat reads a wire figure for code that still computes in float64: "" is 0, and a
// figure that is not a decimal is NaN, which every range check refuses.
func wireFloat(s string) float64 {
	d, ok, err := exact.ParseField("", s)
	if err != nil {
		return math.NaN()
	}
	if !ok {
		return 0
	}
	return d.Float64()
}

// wireDecimal reads a figure of an answer (the CLI and the console reading the server's
// verdicts): "" and a figure that is not a decimal are 0.
func wireDecimal(s string) exact.Decimal {
	d, ok, err := exact.ParseField("", s)
	if err != nil || !ok {
		return exact.Zero
	}
	return d
}

// nanoFigure writes an amount the register counts in billionths (store.Nano, ledger.Nano)
// exactly: 748000 is "0.000748".
func nanoFigure(n int64) string { return exact.Scaled(n, -9).String() }
