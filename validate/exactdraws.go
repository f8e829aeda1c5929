package validate

import (
	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// ExactLineDraw is what a shipment draws on one quota line, as an exact decimal in the
// line's unit, before the register rounds it to billionths.
type ExactLineDraw struct {
	LineNumber int
	Amount     exact.Decimal
}

// PlanDrawsExact is PlanDraws in decimal arithmetic: each controlled component goes to the
// same line (bestLine), and draws its exact figure in the line's unit (Figures.Exacts):
// metric t = kg / 1000, ODP t as computed exactly, CO2-eq t = t × the Protocol GWP, summed
// per line, in line-number order. It returns nil when the exact figures do not list every
// component (a verdict read back from the wire without them); the caller then has only the
// float draws.
func PlanDrawsExact(lic *Licence, fig *Figures, p terms.Purpose) []ExactLineDraw {
	if lic == nil {
		return nil
	}
	x := fig.Exacts()
	if len(x.Components) != len(fig.Components) {
		return nil
	}
	var out []ExactLineDraw
	for i, comp := range fig.Components {
		if !comp.Group.Controlled() {
			continue
		}
		k := bestLine(lic, comp, p)
		if k < 0 {
			continue
		}
		l := lic.QuotaLines[k]
		amount := componentDrawExact(l.Unit, x.Components[i])
		j := -1
		for n := range out {
			if out[n].LineNumber == l.LineNumber {
				j = n
			}
		}
		if j < 0 {
			out = append(out, ExactLineDraw{LineNumber: l.LineNumber, Amount: amount})
		} else {
			out[j].Amount = out[j].Amount.Add(amount)
		}
	}
	for i := 1; i < len(out); i++ { // few lines: insertion sort by line number
		for j := i; j > 0 && out[j].LineNumber < out[j-1].LineNumber; j-- {
			out[j], out[j-1] = out[j-1], out[j]
		}
	}
	return out
}

// componentDrawExact is componentDraw on a component's exact figures.
func componentDrawExact(u terms.QuotaUnit, c substances.ComponentExact) exact.Decimal {
	switch u {
	case terms.QuotaMetricTonnes:
		return c.MassKg.Shift(-3)
	case terms.QuotaODPTonnes:
		return c.ODPTonnes
	case terms.QuotaCO2eTonnes:
		return c.MassKg.Shift(-3).Mul(c.ProtocolGWP)
	}
	return exact.Zero
}
