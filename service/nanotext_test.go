package service

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestNanoTextIsNanoFigure: the integer writer of draw amounts gives, digit for digit, the
// exact decimal nanoFigure writes (zero, whole units, trailing zeros, a single billionth,
// negatives, the int64 ends, and random amounts).
func TestNanoTextIsNanoFigure(t *testing.T) {
	ns := []int64{0, 1, -1, 9, 10, 999_999_999, 1_000_000_000, 1_000_000_001, -1_000_000_000, 1_500_000_000,
		123_456_789_000, 13_600_000, 2_500_000_000_000, math.MaxInt64, math.MinInt64, math.MinInt64 + 1}
	r := rand.New(rand.NewPCG(17, 3))
	for range 20000 {
		n := r.Int64N(1 << uint(r.IntN(62)+1))
		if r.IntN(2) == 0 {
			n = -n
		}
		ns = append(ns, n, n-n%1000)
	}
	for _, n := range ns {
		if got, want := nanoText(n), nanoFigure(n); got != want {
			t.Errorf("nanoText(%d) = %q; nanoFigure gives %q", n, got, want)
		}
	}
}
