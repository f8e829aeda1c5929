package validate

import (
	"math"
	"sync"
	"sync/atomic"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
)

// Exact figures. The checker computes a record's figures in float64 so that checking a
// batch allocates nothing per record (substances.Catalogue.EvaluateInto); what a verdict
// shows (on the wire, in a report) is computed here from the same inputs as exact
// decimals: the declared quantity times the exact factor of its unit (Quantity), and each
// component's share, ODP and Protocol GWP as the catalogue lists them. Nothing of the
// float arithmetic reaches these figures.

// Quantity is the declared figure a record's net mass comes from: Value in Unit, times
// Packages when Packages is above 1 (Value is then the net fill per package).
type Quantity struct {
	Value    Decimal
	Unit     Unit
	Packages int64
}

// Kilograms is the net mass as an exact decimal; 0 when the unit is not known.
func (q Quantity) Kilograms() exact.Decimal {
	fc, fe := q.Unit.factor()
	if fc == 0 || q.Value.Coef == 0 {
		return exact.Zero
	}
	// Coef < 10^18 (ParseDecimal) fits an int64.
	m := exact.Scaled(int64(q.Value.Coef), int32(q.Value.Exp)).Mul(exact.Scaled(int64(fc), int32(fe)))
	if q.Packages > 1 {
		m = m.Mul(exact.FromInt(q.Packages))
	}
	if q.Value.Neg {
		m = m.Neg()
	}
	return m
}

// FiguresExact are a verdict's figures as exact decimals.
type FiguresExact struct {
	NetMassKg  exact.Decimal
	ODPTonnes  exact.Decimal // sum of the components' ODP tonnes
	CO2eTonnes exact.Decimal // sum of the Annex F components' CO2-eq tonnes
	Components []substances.ComponentExact
}

// Exacts gives the figures as exact decimals: f.Exact when it is set (a verdict read back
// from the wire carries its decimals there; its Components may be fewer than f's when the
// wire gave none), else computed from f.Mass and the components
// as substances computes an exact evaluation: kg = net mass × share% / 100, t = kg / 1000,
// ODP t = t × ODP, CO2-eq t = t × Annex GWP (Annex F components only), totals their sums.
// Figures made without a Mass (by a caller that set only NetMassKg) take the shortest
// decimal of NetMassKg.
func (f *Figures) Exacts() FiguresExact {
	if f.Exact != nil {
		return *f.Exact
	}
	m := f.Mass.Kilograms()
	if f.Mass.Unit == UnitUnspecified && f.NetMassKg != 0 {
		m = exact.OfFloat(f.NetMassKg)
	}
	out := FiguresExact{NetMassKg: m, ODPTonnes: exact.Zero, CO2eTonnes: exact.Zero,
		Components: make([]substances.ComponentExact, len(f.Components))}
	for i := range f.Components {
		c := &f.Components[i]
		pct, odp, gwp := ofFloat(c.MassPct), ofFloat(c.ODP), ofFloat(c.ProtocolGWP)
		kg := m.Percent(pct)
		t := kg.Shift(-3)
		x := substances.ComponentExact{MassPct: pct, MassKg: kg, ODP: odp, ODPTonnes: t.Mul(odp), ProtocolGWP: gwp, CO2eTonnes: exact.Zero}
		if c.Group == substances.GroupFI || c.Group == substances.GroupFII {
			x.CO2eTonnes = t.Mul(gwp)
		}
		out.Components[i] = x
		out.ODPTonnes = out.ODPTonnes.Add(x.ODPTonnes)
		out.CO2eTonnes = out.CO2eTonnes.Add(x.CO2eTonnes)
	}
	return out
}

// floatDecimals remembers exact.OfFloat of the shares, ODPs and GWPs Exacts met (by the
// float's bits): they are the catalogue's and the declared compositions' few figures, met
// again in verdict after verdict, and OfFloat writes and parses the float's shortest text
// each time. At most maxFloatDecimals are kept; beyond, OfFloat is called each time.
var (
	floatDecimals     sync.Map // uint64 (math.Float64bits) → exact.Decimal
	floatDecimalsKept atomic.Int64
)

const maxFloatDecimals = 4096

// ofFloat is exact.OfFloat(f), remembered (floatDecimals). A Decimal is a value that no
// operation changes, so one may be shared by every verdict.
func ofFloat(f float64) exact.Decimal {
	k := math.Float64bits(f)
	if d, ok := floatDecimals.Load(k); ok {
		return d.(exact.Decimal)
	}
	d := exact.OfFloat(f)
	if floatDecimalsKept.Load() < maxFloatDecimals {
		if _, had := floatDecimals.LoadOrStore(k, d); !had {
			floatDecimalsKept.Add(1)
		}
	}
	return d
}
