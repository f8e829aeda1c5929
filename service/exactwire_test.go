package service_test

import "github.com/halovet/halovet/exact"

// figureFloat reads a wire figure for a test that compares within a tolerance; "" and an
// unreadable figure are -1, which no such comparison accepts.
func figureFloat(s string) float64 {
	d, err := exact.Parse(s)
	if err != nil {
		return -1
	}
	return d.Float64()
}
