package substances

import (
	"errors"
	"fmt"
)

// ErrCASFormat is wrapped by errors for malformed CAS Registry Numbers.
var ErrCASFormat = errors.New("invalid CAS Registry Number format")

// CASCheckError reports a CAS Registry Number whose check digit does not match.
type CASCheckError struct {
	Number    string
	Got, Want int
}

func (e *CASCheckError) Error() string {
	return fmt.Sprintf("CAS Registry Number %q: check digit is %d, want %d", e.Number, e.Got, e.Want)
}

// ParseCAS validates and normalizes a CAS Registry Number.
func ParseCAS(s string) (string, error) { return "", ErrCASFormat }

// CASCheckDigit computes the check digit of the digits before it.
func CASCheckDigit(body string) (int, error) { return 0, ErrCASFormat }
