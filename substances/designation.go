package substances

import "errors"

// ErrDesignation is wrapped by every designation parsing error.
var ErrDesignation = errors.New("invalid designation")

// ErrNotSingleCompound says a designation names a blend or a 600/700-series substance.
var ErrNotSingleCompound = errors.New("designation is not decodable to a single compound formula")

// Designation is a decoded ASHRAE 34 / ISO 817 designation.
type Designation struct {
	Prefix  string
	Number  string
	Formula Formula
	Isomer  string
}

// ParseDesignation decodes a designation.
func ParseDesignation(s string) (Designation, error) { return Designation{}, ErrDesignation }

// Canonical returns the R- form.
func (d Designation) Canonical() string { return "R-" + d.Number }

// HalonFormula decodes a halon number.
func HalonFormula(number string) (Formula, error) { return nil, ErrDesignation }

// HalonNumber encodes a halon number.
func HalonNumber(f Formula) (string, error) { return "", ErrDesignation }

// NumberForFormula returns the base number for a formula.
func NumberForFormula(f Formula) (string, error) { return "", ErrDesignation }

// IsomerSuffix returns the isomer suffix for a structure.
func IsomerSuffix(structure string) (string, error) { return "", ErrDesignation }

// EncodeDesignation returns the R- designation for a structure.
func EncodeDesignation(structure string) (string, error) { return "", ErrDesignation }
