package chart

import (
	"math"
	"strconv"
	"strings"
)

// Thousands prints v with at most decimals decimals (trailing zeros dropped) and a comma
// between groups of three digits: 500000 → "500,000", 1234.5 → "1,234.5".
func Thousands(v float64, decimals int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
	s := strconv.FormatFloat(v, 'f', decimals, 64)
	neg := strings.HasPrefix(s, "-")
	s = strings.TrimPrefix(s, "-")
	whole, frac, _ := strings.Cut(s, ".")
	frac = strings.TrimRight(frac, "0")
	var b strings.Builder
	if neg && (strings.Trim(whole, "0") != "" || frac != "") {
		b.WriteByte('-')
	}
	for i, r := range whole {
		if i > 0 && (len(whole)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(r)
	}
	if frac != "" {
		b.WriteByte('.')
		b.WriteString(frac)
	}
	return b.String()
}

// figure prints a chart figure: two decimals at most, whole numbers from 10,000 up (the
// CO2-eq tonnes of Annex F run into the millions; a hundredth of one says nothing).
func figure(v float64) string {
	if math.Abs(v) >= 10000 {
		return Thousands(v, 0)
	}
	return Thousands(v, 2)
}

// niceStep rounds a raw tick step up to 1, 2 or 5 times a power of ten.
func niceStep(raw float64) float64 {
	if raw <= 0 || math.IsNaN(raw) || math.IsInf(raw, 0) {
		return 1
	}
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 5, 10} {
		if m*p >= raw {
			return m * p
		}
	}
	return 10 * p
}

// tick prints an axis value with as many decimals as the step needs.
func tick(v, step float64) string {
	d := 0
	if step < 1 {
		d = int(math.Ceil(-math.Log10(step)))
	}
	return Thousands(v, d)
}
