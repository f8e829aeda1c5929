package console

import "github.com/halovet/halovet/exact"

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
