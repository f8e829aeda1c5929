// Package exact carries halovet's figures (masses, tonnages, ODP, GWP, percentages) as
// decimals, so that what a Party reports and a quota counts is computed and shown without
// binary-float noise. It wraps github.com/shopspring/decimal and adds what the project needs:
// a canonical text form for the wire, parsing that names what it accepts, and one table of
// display precision per unit (Units).
//
// The wire form (String) is exact: plain decimal notation, no exponent, no trailing zeros
// after the point, "0" for zero. Rounding happens only for display (Display), to the
// places the unit's row in Units states, and where a figure is derived by division, to the
// places the caller names (DivRound).
package exact

import (
	"database/sql/driver"
	"errors"
	"fmt"
	"math"
	"math/big"
	"strconv"
	"strings"

	"github.com/shopspring/decimal"
)

// Decimal is an exact decimal figure. The zero value is 0.
type Decimal struct{ d decimal.Decimal }

// Zero is 0.
var Zero Decimal

// Hundred is 100, the divisor of percentages.
var Hundred = FromInt(100)

// ErrSyntax is wrapped by every Parse error.
var ErrSyntax = errors.New("not a decimal number")

// Parse reads a decimal written in plain notation: an optional sign, digits, optionally a
// point and more digits ("0.055", "1430", "-2.5", ".5"). Exponents, NaN, infinities,
// thousands separators and a decimal comma are refused, with an error saying so.
func Parse(s string) (Decimal, error) {
	t := strings.TrimSpace(s)
	if t == "" {
		return Zero, fmt.Errorf("%w: empty; write the figure in plain decimal notation, e.g. 0.055 or 1430", ErrSyntax)
	}
	digits, point := 0, false
	for i, r := range t {
		switch {
		case r >= '0' && r <= '9':
			digits++
		case r == '.' && !point:
			point = true
		case (r == '-' || r == '+') && i == 0:
		default:
			return Zero, fmt.Errorf("%w: %q has %q at position %d; write the figure in plain decimal notation with a point, e.g. 0.055 or 1430 (no exponent, no separators)", ErrSyntax, s, r, i+1)
		}
	}
	if digits == 0 {
		return Zero, fmt.Errorf("%w: %q has no digits; write the figure in plain decimal notation, e.g. 0.055 or 1430", ErrSyntax, s)
	}
	d, err := decimal.NewFromString(t)
	if err != nil {
		return Zero, fmt.Errorf("%w: %q: %v", ErrSyntax, s, err)
	}
	return Decimal{d}, nil
}

// MustParse is Parse for figures written in the source code; it panics on a bad literal.
func MustParse(s string) Decimal {
	d, err := Parse(s)
	if err != nil {
		panic(err)
	}
	return d
}

// FromInt returns n.
func FromInt(n int64) Decimal { return Decimal{decimal.NewFromInt(n)} }

// Scaled returns coef × 10^exp exactly (a figure counted in scaled integers, such as the
// register's billionths: Scaled(748000, -9) is 0.000748).
func Scaled(coef int64, exp int32) Decimal { return Decimal{decimal.New(coef, exp)} }

// FromFloat returns the shortest decimal that reads back as f (strconv's shortest
// representation). A figure that was written as a decimal and stored in a float64 (the
// catalogue's ODP 0.055, GWP 1430, share 44) comes back as exactly that decimal; a float
// that is the result of float arithmetic comes back with its noise, so compute in Decimal
// instead. NaN and infinities give 0 and false.
func FromFloat(f float64) (Decimal, bool) {
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return Zero, false
	}
	d, err := decimal.NewFromString(strconv.FormatFloat(f, 'g', -1, 64))
	if err != nil {
		return Zero, false
	}
	return Decimal{d}, true
}

// OfFloat is FromFloat for values known to be finite (stored catalogue figures); NaN and
// infinities give 0.
func OfFloat(f float64) Decimal {
	d, _ := FromFloat(f)
	return d
}

// String is the exact wire form: plain notation, no exponent, no trailing zeros after the
// point, "0" for zero (never "-0").
func (a Decimal) String() string {
	if a.d.IsZero() {
		return "0"
	}
	s := a.d.String()
	if strings.Contains(s, ".") {
		s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	}
	return s
}

// Fixed writes a rounded (half away from zero) to exactly places decimals, keeping trailing
// zeros: Fixed(2) of 1.5 is "1.50".
func (a Decimal) Fixed(places int32) string {
	s := a.d.StringFixed(places)
	if strings.TrimLeft(s, "-0.") == "" {
		s = strings.TrimPrefix(s, "-")
	}
	return s
}

// Float64 returns the nearest float64, for callers that still compute in binary floats.
// A figure of at most 15 digits with at most 22 decimals (every figure the register keeps
// at billionths below a million units) converts without allocating: its coefficient and
// 10^exponent are exact floats, and one division or product rounds correctly.
func (a Decimal) Float64() float64 {
	if e := a.d.Exponent(); e >= -22 && e <= 22 && a.d.NumDigits() <= 15 {
		c := float64(a.d.CoefficientInt64())
		if e < 0 {
			return c / pow10[-e]
		}
		return c * pow10[e]
	}
	return a.d.InexactFloat64()
}

// pow10 are the powers of ten a float64 holds exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
	1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// Add returns a+b.
func (a Decimal) Add(b Decimal) Decimal { return Decimal{a.d.Add(b.d)} }

// Sub returns a-b.
func (a Decimal) Sub(b Decimal) Decimal { return Decimal{a.d.Sub(b.d)} }

// Mul returns a×b, exactly.
func (a Decimal) Mul(b Decimal) Decimal { return Decimal{a.d.Mul(b.d)} }

// Neg returns -a.
func (a Decimal) Neg() Decimal { return Decimal{a.d.Neg()} }

// Abs returns |a|.
func (a Decimal) Abs() Decimal { return Decimal{a.d.Abs()} }

// Shift returns a×10^n, exactly: Shift(-2) turns a percentage into a fraction, Shift(-3)
// kilograms into tonnes.
func (a Decimal) Shift(n int32) Decimal { return Decimal{a.d.Shift(n)} }

// Percent returns a×p/100, exactly: the part of a that p percent is.
func (a Decimal) Percent(p Decimal) Decimal { return Decimal{a.d.Mul(p.d).Shift(-2)} }

// DivRound returns a/b rounded half away from zero to places decimals. Division is the one
// operation that is not exact, so the caller states the places. b must not be 0.
func (a Decimal) DivRound(b Decimal, places int32) Decimal {
	return Decimal{a.d.DivRound(b.d, places)}
}

// Round returns a rounded half away from zero to places decimals.
func (a Decimal) Round(places int32) Decimal { return Decimal{a.d.Round(places)} }

// Cmp returns -1, 0 or +1 as a is less than, equal to or greater than b.
func (a Decimal) Cmp(b Decimal) int { return a.d.Cmp(b.d) }

// Equal reports a == b as numbers ("1.50" equals "1.5").
func (a Decimal) Equal(b Decimal) bool { return a.d.Equal(b.d) }

// IsZero reports a == 0.
func (a Decimal) IsZero() bool { return a.d.IsZero() }

// Sign returns -1, 0 or +1.
func (a Decimal) Sign() int { return a.d.Sign() }

// Sum returns the exact sum of xs (0 for none).
func Sum(xs ...Decimal) Decimal {
	s := decimal.Zero
	for _, x := range xs {
		s = s.Add(x.d)
	}
	return Decimal{s}
}

// Max returns the larger of a and b.
func Max(a, b Decimal) Decimal {
	if a.Cmp(b) >= 0 {
		return a
	}
	return b
}

// Scan reads a figure from the database (database/sql's Scanner, which pgx uses): a numeric
// column arrives as its exact decimal text. Text and integers are accepted; a binary float
// (a float8 column, or a cast to one) is refused, so that no sum passes through float64 on
// its way from PostgreSQL, and so is NULL.
func (a *Decimal) Scan(src any) error {
	switch v := src.(type) {
	case string:
		d, err := Parse(v)
		if err != nil {
			return err
		}
		*a = d
	case []byte:
		d, err := Parse(string(v))
		if err != nil {
			return err
		}
		*a = d
	case int64:
		*a = FromInt(v)
	case nil:
		return errors.New("exact: cannot read NULL as a figure; coalesce it in the query or scan into a pointer")
	default:
		return fmt.Errorf("exact: cannot read a %T as a figure; select the column as numeric (or text), not float8", src)
	}
	return nil
}

// Value writes a figure as a query argument (database/sql's Valuer): its exact text, which
// PostgreSQL reads into a numeric column without rounding.
func (a Decimal) Value() (driver.Value, error) { return a.String(), nil }

// Rat returns a as an exact rational, for arithmetic that needs exact division (math/big).
func (a Decimal) Rat() *big.Rat { return a.d.Rat() }

// MarshalJSON writes a figure as a JSON string holding its exact wire form ("0.055"), never
// as a JSON number: a reader that parses numbers into binary floats would lose digits.
func (a Decimal) MarshalJSON() ([]byte, error) { return strconv.AppendQuote(nil, a.String()), nil }

// UnmarshalJSON reads a figure written as a JSON string ("0.055") or, for data written
// before figures were strings, as a JSON number (0.055), from its text: no float64 in
// between either way. An exponent is refused, as Parse refuses it.
func (a *Decimal) UnmarshalJSON(b []byte) error {
	s := string(b)
	if s == "null" {
		return errors.New("exact: a figure cannot be null")
	}
	if len(s) > 0 && s[0] == '"' {
		u, err := strconv.Unquote(s)
		if err != nil {
			return fmt.Errorf("%w: %s is not a JSON string", ErrSyntax, s)
		}
		s = u
	}
	d, err := Parse(s)
	if err != nil {
		return err
	}
	*a = d
	return nil
}

// Units returns a counted in units of 10^exp (the register's billionths: Units(-9)),
// rounded half away from zero to a whole unit, and false when that count does not fit an
// int64.
func (a Decimal) Units(exp int32) (int64, bool) {
	n := a.d.Shift(-exp).Round(0)
	if !n.BigInt().IsInt64() {
		return 0, false
	}
	return n.IntPart(), true
}
