package substances

import "errors"

// ErrHSCode is wrapped by HS code errors.
var ErrHSCode = errors.New("invalid HS code")

// HSEdition names an edition of the Harmonized System.
type HSEdition string

// HS editions supported.
const (
	HS2017 HSEdition = "HS2017"
	HS2022 HSEdition = "HS2022"
)

// HSSubheading is one six-digit HS subheading.
type HSSubheading struct {
	Edition HSEdition
	Code    string
	Text    string
	Shared  bool
	Status  string
}

// NormalizeHS normalizes an HS code to "NNNN.NN".
func NormalizeHS(code string) (string, error) { return "", ErrHSCode }

// LookupHS looks a subheading up.
func LookupHS(edition HSEdition, code string) (HSSubheading, bool) { return HSSubheading{}, false }

// HSEditions lists the editions.
func HSEditions() []HSEdition { return []HSEdition{HS2017, HS2022} }

// HSShare is one component of a mixture for HS classification.
type HSShare struct {
	Designation string
	Group       Group
	MassPct     float64
}

// MixtureHS2022 classifies a mixture in heading 38.27.
func MixtureHS2022(shares []HSShare) (code string, note string) { return "", "not implemented" }

// MixtureHS2017 classifies a mixture in 3824.71-.79.
func MixtureHS2017(shares []HSShare) (code string, note string) { return "", "not implemented" }
