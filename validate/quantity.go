package validate

import (
	"errors"
	"fmt"
	"math"
	"math/bits"
	"strconv"
	"strings"

	"github.com/halovet/halovet/terms"
)

// Unit is the unit of a declared quantity.
type Unit int

// Units of mass accepted in declarations.
const (
	UnitUnspecified Unit = iota
	UnitKilogram         // kg
	UnitTonne            // t, metric tonne = 1000 kg
	UnitGram             // g = 0.001 kg
	UnitPound            // lb, international avoirdupois pound = 0.45359237 kg exactly
)

var unitNames = [...]string{"", "kg", "t", "g", "lb"}

// String returns the unit symbol ("kg", "t", "g", "lb"), or "" when unspecified.
func (u Unit) String() string {
	if u < 0 || int(u) >= len(unitNames) {
		return fmt.Sprintf("unit(%d)", int(u))
	}
	return unitNames[u]
}

// ErrUnitAmbiguous is wrapped when a unit word could mean more than one mass (a "ton" may be a
// metric tonne, a short ton of 907.18474 kg or a long ton of 1016.0469088 kg).
var ErrUnitAmbiguous = errors.New("ambiguous unit")

// ParseUnit reads a unit symbol or word case-insensitively ("kg", "KGS", "tonnes", "lbs").
// Empty text gives UnitUnspecified and no error. "ton" and "mt" are refused as ambiguous.
func ParseUnit(s string) (Unit, error) {
	switch enumKey(s) {
	case "":
		if strings.TrimSpace(s) == "" {
			return UnitUnspecified, nil
		}
	case "kg", "kgs", "kilogram", "kilograms", "kilogramme", "kilogrammes":
		return UnitKilogram, nil
	case "t", "tonne", "tonnes", "metrictonne", "metrictonnes", "metricton", "metrictons":
		return UnitTonne, nil
	case "g", "gram", "grams", "gramme", "grammes":
		return UnitGram, nil
	case "lb", "lbs", "pound", "pounds":
		return UnitPound, nil
	case "ton", "tons", "mt":
		return UnitUnspecified, fmt.Errorf("%w: unit %q may be a metric tonne, a short ton or a long ton; accepted: kg, t (metric tonne), g, lb", ErrUnitAmbiguous, cutText(s))
	}
	return UnitUnspecified, fmt.Errorf("%w: unit %q; accepted: kg, t (metric tonne), g, lb", terms.ErrUnknownValue, cutText(s))
}

// unitFactor gives the exact kilograms per unit as coef × 10^exp.
func (u Unit) factor() (coef uint64, exp int) {
	switch u {
	case UnitKilogram:
		return 1, 0
	case UnitTonne:
		return 1, 3
	case UnitGram:
		return 1, -3
	case UnitPound:
		// 1 lb = 0.45359237 kg exactly. source: international yard and pound agreement (1959).
		return 45359237, -8
	}
	return 0, 0
}

// Decimal is an exact decimal number: (-1)^Neg × Coef × 10^Exp.
type Decimal struct {
	Coef uint64
	Exp  int
	Neg  bool
}

// Errors of ParseDecimal; each is wrapped with the text and what is accepted.
var (
	ErrDecimalEmpty   = errors.New("empty number")
	ErrDecimalComma   = errors.New("comma in number")
	ErrDecimalSpace   = errors.New("space in number")
	ErrDecimalSyntax  = errors.New("not a plain decimal number")
	ErrDecimalDigits  = errors.New("too many digits")
	ErrContainerCount = errors.New("container count out of range")
)

// maxDecimalDigits is the most significant digits a quantity may have (fits a uint64).
const maxDecimalDigits = 18

// ParseDecimal reads a plain decimal number with a dot as the decimal separator: "1250",
// "1250.5", "0.25", ".5", optionally with a leading sign. Surrounding spaces are ignored.
// A comma is refused (it is a decimal separator in some countries and a thousands separator in
// others, so "1,500" is ambiguous), as are spaces or other thousands separators inside the
// number, exponents, and more than 18 significant digits.
func ParseDecimal(s string) (Decimal, error) {
	t := strings.TrimSpace(s)
	if t == "" {
		return Decimal{}, fmt.Errorf("%w: write the quantity as a decimal number with a dot, e.g. 1250.5", ErrDecimalEmpty)
	}
	var d Decimal
	i := 0
	switch t[0] {
	case '-':
		d.Neg = true
		i++
	case '+':
		i++
	}
	digits, frac, sawDot, sawDigit := 0, 0, false, false
	for ; i < len(t); i++ {
		c := t[i]
		switch {
		case c >= '0' && c <= '9':
			sawDigit = true
			if sawDot {
				frac++
			}
			if d.Coef == 0 && c == '0' {
				continue // leading zeros are not significant
			}
			if digits == maxDecimalDigits {
				return Decimal{}, fmt.Errorf("%w: %q has more than %d significant digits", ErrDecimalDigits, cutText(s), maxDecimalDigits)
			}
			d.Coef = d.Coef*10 + uint64(c-'0')
			digits++
		case c == '.':
			if sawDot {
				return Decimal{}, fmt.Errorf("%w: %q has more than one dot; write one dot as the decimal separator and no thousands separator, e.g. 1250.5", ErrDecimalSyntax, cutText(s))
			}
			sawDot = true
		case c == ',':
			return Decimal{}, fmt.Errorf("%w: %q; use a dot as the decimal separator and no thousands separator, e.g. 1250.5", ErrDecimalComma, cutText(s))
		case c == ' ' || c == '\t' || c == '\'' || c == '_':
			return Decimal{}, fmt.Errorf("%w: %q; write the number without spaces or thousands separators, e.g. 1250.5", ErrDecimalSpace, cutText(s))
		default:
			return Decimal{}, fmt.Errorf("%w: %q; accepted: digits with at most one dot as the decimal separator, e.g. 1250.5 (no units, exponents or thousands separators)", ErrDecimalSyntax, cutText(s))
		}
	}
	if !sawDigit {
		return Decimal{}, fmt.Errorf("%w: %q has no digits; write a decimal number such as 1250.5", ErrDecimalSyntax, cutText(s))
	}
	d.Exp = -frac
	if d.Coef == 0 {
		d.Neg = false
		d.Exp = 0
	}
	return d, nil
}

// Sign returns -1, 0 or +1.
func (d Decimal) Sign() int {
	switch {
	case d.Coef == 0:
		return 0
	case d.Neg:
		return -1
	}
	return 1
}

// String writes the number in plain normalized form ("1250.5", "-0.25", "0"), without
// trailing zeros after the dot; equal numbers give equal strings.
func (d Decimal) String() string {
	return string(d.appendNormalized(nil))
}

func (d Decimal) appendNormalized(b []byte) []byte {
	if d.Coef == 0 {
		return append(b, '0')
	}
	coef, exp := d.Coef, d.Exp
	for exp < 0 && coef%10 == 0 {
		coef /= 10
		exp++
	}
	if d.Neg {
		b = append(b, '-')
	}
	var digits [24]byte
	ds := strconv.AppendUint(digits[:0], coef, 10)
	switch {
	case exp >= 0:
		b = append(b, ds...)
		for ; exp > 0; exp-- {
			b = append(b, '0')
		}
	case -exp >= len(ds):
		b = append(b, '0', '.')
		for k := -exp - len(ds); k > 0; k-- {
			b = append(b, '0')
		}
		b = append(b, ds...)
	default:
		cut := len(ds) + exp
		b = append(b, ds[:cut]...)
		b = append(b, '.')
		b = append(b, ds[cut:]...)
	}
	return b
}

// Float64 returns the float64 nearest to d.
func (d Decimal) Float64() float64 {
	f := exactToFloat(0, d.Coef, d.Exp)
	if d.Neg {
		return -f
	}
	return f
}

// maxContainers bounds PackageCount so that the exact product stays inside 128 bits.
const maxContainers = 1_000_000_000

// ToKilograms converts an exact quantity in unit u to kilograms, multiplied by containers when
// containers > 0 (the quantity then being the net fill of each container). The product is
// formed exactly in integer arithmetic and rounded once, so the result is the float64 nearest
// to the true value: 100 lb gives 45.359237 kg to the last bit.
func ToKilograms(q Decimal, u Unit, containers int64) (float64, error) {
	fc, fe := u.factor()
	if fc == 0 {
		return 0, fmt.Errorf("%w: unit %v; accepted: kg, t, g, lb", terms.ErrUnknownValue, u)
	}
	if containers < 0 || containers > maxContainers {
		return 0, fmt.Errorf("%w: %d; accepted: 0 (quantity is the total) to %d", ErrContainerCount, containers, maxContainers)
	}
	// q.Coef < 10^18 < 2^60, fc < 2^26, containers < 2^30: the product fits 116 bits.
	hi, lo := bits.Mul64(q.Coef, fc)
	if containers > 1 {
		h2, l2 := bits.Mul64(lo, uint64(containers))
		hi = hi*uint64(containers) + h2
		lo = l2
	}
	f := exactToFloat(hi, lo, q.Exp+fe)
	if q.Neg {
		f = -f
	}
	return f, nil
}

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
	1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// exactToFloat returns the float64 nearest to (hi·2^64 + lo) × 10^exp.
func exactToFloat(hi, lo uint64, exp int) float64 {
	if hi == 0 && lo == 0 {
		return 0
	}
	// Fast path: an integer below 2^53 and a power of ten up to 10^22 are both exact, so a
	// single multiplication or division rounds once and is correctly rounded.
	if hi == 0 && lo < 1<<53 && exp >= -22 && exp <= 22 {
		if exp >= 0 {
			return float64(lo) * pow10[exp]
		}
		return float64(lo) / pow10[-exp]
	}
	// Slow path: write the exact decimal and let strconv round it.
	var buf [64]byte
	b := appendUint128(buf[:0], hi, lo)
	b = append(b, 'e')
	b = strconv.AppendInt(b, int64(exp), 10)
	f, err := strconv.ParseFloat(string(b), 64)
	if err != nil && !errors.Is(err, strconv.ErrRange) {
		return math.NaN()
	}
	return f
}

// appendUint128 appends the decimal digits of hi·2^64 + lo.
func appendUint128(b []byte, hi, lo uint64) []byte {
	if hi == 0 {
		return strconv.AppendUint(b, lo, 10)
	}
	const chunk = 1e19
	// Split into (hi,lo) = q·10^19 + r with q < 2^64 (true while hi < 10^19).
	q, r := bits.Div64(hi%chunk, lo, chunk)
	top := hi / chunk
	var tail [19]byte
	ts := strconv.AppendUint(tail[:0], r, 10)
	if top > 0 {
		b = appendUint128(b, top, q)
	} else {
		b = strconv.AppendUint(b, q, 10)
	}
	for k := len(ts); k < 19; k++ {
		b = append(b, '0')
	}
	return append(b, ts...)
}
