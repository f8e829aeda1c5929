package console

import (
	"math"

	"github.com/halovet/halovet/chart"
)

// figure prints a figure with thousands separators and at most three decimals.
func figure(v float64) string {
	if math.Abs(v) >= 10000 {
		return chart.Thousands(v, 0)
	}
	return chart.Thousands(v, 3)
}

// percent prints part of whole as a percentage with one decimal; "–" when whole is 0.
func percent(part, whole float64) string {
	if whole == 0 {
		return "–"
	}
	return chart.Thousands(100*part/whole, 1) + " %"
}
