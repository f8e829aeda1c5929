package console

import (
	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// decimalUnits are the unit words the templates give dec.
var decimalUnits = map[string]exact.Unit{
	"kg": exact.Kg, "t": exact.Tonnes, "odp-t": exact.ODPTonnes, "co2e-t": exact.CO2eTonnes,
	"percent": exact.Percent, "points": exact.Points, "g/mol": exact.GPerMol, "years": exact.Years,
	"odp": exact.ODP, "gwp": exact.GWP,
}

// dec shows a wire figure (a decimal string) rounded for its unit (exact.Units); an
// unknown figure ("") is "—".
func dec(s, unit string) string {
	if s == "" {
		return "—"
	}
	d, err := exact.Parse(s)
	if err != nil {
		return s
	}
	u, ok := decimalUnits[unit]
	if !ok {
		return d.String()
	}
	return d.Display(u)
}

// amount shows a figure in a control scope's unit (ODP t or CO2-eq t), rounded for it.
func amount(s string, u halovetv1.ControlUnit) string {
	if u == halovetv1.ControlUnit_CONTROL_UNIT_CO2E_TONNES {
		return dec(s, "co2e-t")
	}
	return dec(s, "odp-t")
}

// basisWord says where a quantity of the year report comes from.
func basisWord(b halovetv1.QuantityBasis) string {
	switch b {
	case halovetv1.QuantityBasis_QUANTITY_BASIS_SHIPMENTS:
		return "shipments"
	case halovetv1.QuantityBasis_QUANTITY_BASIS_OUTSIDE_CUSTOMS:
		return "outside-customs"
	case halovetv1.QuantityBasis_QUANTITY_BASIS_WHOLE_YEAR:
		return "whole-year"
	case halovetv1.QuantityBasis_QUANTITY_BASIS_NATIONAL_ENTRY:
		return "national-entry"
	}
	return "unknown"
}

// quotaUnits are the display rows of the quota units.
var quotaUnits = map[halovetv1.QuotaUnit]exact.Unit{
	halovetv1.QuotaUnit_QUOTA_UNIT_METRIC_TONNES: exact.Tonnes,
	halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES:    exact.ODPTonnes,
	halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES:   exact.CO2eTonnes,
}

// quota shows a quota amount (a decimal string in the line's unit u) rounded for u.
func quota(s string, u halovetv1.QuotaUnit) string {
	d, err := exact.Parse(s)
	if err != nil {
		return "—"
	}
	if row, ok := quotaUnits[u]; ok {
		return d.Display(row)
	}
	return d.String()
}

// shareUsed shows drawn as a percentage of allocated with one decimal; "–" when nothing is
// allocated.
func shareUsed(drawn, allocated string) string {
	a, err := exact.Parse(allocated)
	if err != nil || a.IsZero() {
		return "–"
	}
	d, err := exact.Parse(drawn)
	if err != nil {
		return "–"
	}
	return d.Shift(2).DivRound(a, 1).Fixed(1) + " %"
}
