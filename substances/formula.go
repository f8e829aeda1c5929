package substances

import "errors"

// Formula is a molecular formula: element symbol -> atom count.
type Formula map[string]int

// ErrFormula is wrapped by every formula parsing error.
var ErrFormula = errors.New("invalid formula")

// ParseFormula parses a Hill or condensed structural formula.
func ParseFormula(s string) (Formula, error) { return nil, ErrFormula }

// Hill returns the formula in Hill order.
func (f Formula) Hill() string { return "" }

// MolarMass returns the molar mass in g/mol.
func (f Formula) MolarMass() (float64, error) { return 0, ErrFormula }

// Equal reports whether f and g hold the same atoms.
func (f Formula) Equal(g Formula) bool { return false }

// Count returns the number of atoms of element el.
func (f Formula) Count(el string) int { return f[el] }
