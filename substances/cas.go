package substances

import (
	"errors"
	"fmt"
	"strings"
)

// ErrCASFormat is wrapped by errors for text that is not a CAS Registry Number in form.
var ErrCASFormat = errors.New("invalid CAS Registry Number format")

// casAccepts is the form a caller must use (published CAS Registry Number format).
const casAccepts = "expected 2-7 digits, a hyphen, 2 digits, a hyphen and 1 check digit, e.g. 75-45-6 (the same 5-10 digits without hyphens are accepted too)"

// CASCheckError reports a CAS Registry Number whose check digit does not match the digits
// before it.
type CASCheckError struct {
	Number    string // the number as normalized, with the wrong check digit
	Got, Want int    // check digit written and check digit computed
}

func (e *CASCheckError) Error() string {
	return fmt.Sprintf("CAS Registry Number %s: check digit is %d but the digits before it give %d (sum of each digit times its position from the right, mod 10)", e.Number, e.Got, e.Want)
}

// ParseCAS validates a CAS Registry Number and returns it in normal form "NNNNNNN-NN-N":
// surrounding space is trimmed, Unicode hyphens and dashes count as hyphens, zero padding of
// the first part is dropped, and a run of 5-10 digits without hyphens is split before the
// last 3 and the last digit. A malformed number gives an error wrapping ErrCASFormat; a
// wrong check digit gives a *CASCheckError. A valid check digit does not prove that the
// number is assigned to a substance.
func ParseCAS(s string) (string, error) {
	t := strings.TrimSpace(s)
	for _, dash := range []string{"\u2010", "\u2011", "\u2012", "\u2013", "\u2212"} {
		t = strings.ReplaceAll(t, dash, "-")
	}
	var first, second, check string
	parts := strings.Split(t, "-")
	switch len(parts) {
	case 3:
		first, second, check = parts[0], parts[1], parts[2]
	case 1:
		if len(t) < 5 || len(t) > 10+2 { // leave room for zero padding; checked below
			return "", fmt.Errorf("%w: %q: %s", ErrCASFormat, s, casAccepts)
		}
		first, second, check = t[:len(t)-3], t[len(t)-3:len(t)-1], t[len(t)-1:]
	default:
		return "", fmt.Errorf("%w: %q has %d hyphen-separated parts; %s", ErrCASFormat, s, len(parts), casAccepts)
	}
	for _, part := range []string{first, second, check} {
		if part == "" || !allASCIIDigits(part) {
			return "", fmt.Errorf("%w: %q: %s", ErrCASFormat, s, casAccepts)
		}
	}
	first = strings.TrimLeft(first, "0")
	if len(first) < 2 || len(first) > 7 || len(second) != 2 || len(check) != 1 {
		return "", fmt.Errorf("%w: %q: %s", ErrCASFormat, s, casAccepts)
	}
	body := first + second
	want, err := CASCheckDigit(body)
	if err != nil {
		return "", err
	}
	number := first + "-" + second + "-" + check
	if got := int(check[0] - '0'); got != want {
		return "", &CASCheckError{Number: number, Got: got, Want: want}
	}
	return number, nil
}

// CASCheckDigit computes the check digit for the digits before it, given with or without
// hyphens ("75-45" or "7545"): each digit times its position counted from the right
// (starting at 1), summed, mod 10 (published CAS check-digit method).
func CASCheckDigit(body string) (int, error) {
	digits := strings.ReplaceAll(body, "-", "")
	if len(digits) < 4 || len(digits) > 9 || !allASCIIDigits(digits) {
		return 0, fmt.Errorf("%w: check-digit body %q: expected the 4-9 digits before the check digit, e.g. 75-45 or 7545", ErrCASFormat, body)
	}
	sum := 0
	for i := 0; i < len(digits); i++ {
		pos := len(digits) - i // rightmost digit has position 1
		sum += int(digits[i]-'0') * pos
	}
	return sum % 10, nil
}

func allASCIIDigits(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < '0' || s[i] > '9' {
			return false
		}
	}
	return true
}
