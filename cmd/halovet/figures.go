package main

import "github.com/halovet/halovet/exact"

// Figures on the wire are decimal strings (DEVELOPERS.md, "Figures on the wire"). JSON and
// CSV carry them as they come; text shows them rounded to the places exact.Units states
// for their unit.

// shown writes a wire figure for a reader, rounded for its unit; "" (unknown) stays "".
func shown(s string, u exact.Unit) string {
	if s == "" {
		return ""
	}
	d, err := exact.Parse(s)
	if err != nil {
		return s
	}
	return d.Display(u)
}

// wireDec reads a wire figure; "" and unreadable text are 0.
func wireDec(s string) exact.Decimal {
	d, err := exact.Parse(s)
	if err != nil {
		return exact.Zero
	}
	return d
}

// positive reports a wire figure above 0.
func positive(s string) bool { return wireDec(s).Sign() > 0 }

// wireOf writes a flag's float64 value as a wire figure: the shortest decimal that gives it.
func wireOf(f float64) string { return exact.OfFloat(f).String() }
