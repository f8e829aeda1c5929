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

// fine prints a figure with thousands separators and up to six decimals, for the small
// ODP tonnages of single shipments (700 kg of HCFC-22 is 0.0385 ODP t).
func fine(v float64) string {
	return chart.Thousands(v, 6)
}
