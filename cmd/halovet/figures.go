package main

import (
	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

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

// The consumption verbs' figures (ConsumptionService): text shows them rounded per unit,
// CSV and JSON carry the wire decimals.

// showT shows metric tonnes.
func showT(s string) string { return shown(s, exact.Tonnes) }

// showODP shows ODP tonnes.
func showODP(s string) string { return shown(s, exact.ODPTonnes) }

// showCO2e shows tonnes CO2-eq.
func showCO2e(s string) string { return shown(s, exact.CO2eTonnes) }

// asIs is the CSV form of a wire figure: exactly as the server wrote it.
func asIs(s string) string { return s }

// unitExact is the row of exact.Units of a control scope's unit.
func unitExact(u halovetv1.ControlUnit) exact.Unit {
	if u == halovetv1.ControlUnit_CONTROL_UNIT_CO2E_TONNES {
		return exact.CO2eTonnes
	}
	return exact.ODPTonnes
}

// showAmount shows an amount in a control scope's unit.
func showAmount(s string, u halovetv1.ControlUnit) string { return shown(s, unitExact(u)) }

// shareText writes a fraction on the wire ("0.028") as the percentage it is ("2.8").
func shareText(s string) string {
	if s == "" {
		return ""
	}
	return wireDec(s).Shift(2).String()
}

// sumOf adds wire figures exactly.
func sumOf(ss ...string) string {
	t := exact.Zero
	for _, s := range ss {
		t = t.Add(wireDec(s))
	}
	return t.String()
}
