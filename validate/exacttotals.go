package validate

import (
	"math"
	"math/bits"
	"strconv"
	"sync"
	"sync/atomic"

	"github.com/halovet/halovet/substances"
)

// TotalsText gives the wire text of Exacts' NetMassKg, ODPTonnes and CO2eTonnes (the exact
// decimals' String) without the decimals: the same products and sums, in 128-bit integers
// (a coefficient and a power of ten), when every figure fits; else it is Exacts. A stream
// that sends no per-component figures needs only these three, and Exacts allocates a
// number for each product of each component.
func (f *Figures) TotalsText() (netMassKg, odpTonnes, co2eTonnes string) {
	if n, o, c, ok := f.totalsFast(); ok {
		return n, o, c
	}
	x := f.Exacts()
	return x.NetMassKg.String(), x.ODPTonnes.String(), x.CO2eTonnes.String()
}

// ComponentText is one component's exact figures in the wire's text: the String of each
// of substances.ComponentExact's decimals, as Exacts computes them.
type ComponentText struct {
	MassPct, MassKg, ODP, ODPTonnes, ProtocolGWP, CO2eTonnes string
}

// FiguresText are Exacts' figures in the wire's text (each exact decimal's String).
type FiguresText struct {
	NetMassKg, ODPTonnes, CO2eTonnes string
	Components                       []ComponentText
}

// ExactsText gives Exacts' figures, totals and per component, as the exact decimals'
// String, computed as TotalsText computes the totals: in 128-bit integers when every
// figure fits, else through Exacts. A verdict with per-component figures needs only their
// text, and Exacts allocates a number for each product of each component; the shares,
// ODPs and GWPs, met again in verdict after verdict, keep their text (floatParts).
func (f *Figures) ExactsText() FiguresText {
	out := FiguresText{Components: make([]ComponentText, len(f.Components))}
	if n, o, c, ok := f.figuresFast(out.Components); ok {
		out.NetMassKg, out.ODPTonnes, out.CO2eTonnes = n, o, c
		return out
	}
	x := f.Exacts()
	out.NetMassKg, out.ODPTonnes, out.CO2eTonnes = x.NetMassKg.String(), x.ODPTonnes.String(), x.CO2eTonnes.String()
	out.Components = out.Components[:0]
	for _, c := range x.Components {
		out.Components = append(out.Components, ComponentText{MassPct: c.MassPct.String(), MassKg: c.MassKg.String(),
			ODP: c.ODP.String(), ODPTonnes: c.ODPTonnes.String(), ProtocolGWP: c.ProtocolGWP.String(), CO2eTonnes: c.CO2eTonnes.String()})
	}
	return out
}

// totalsFast is TotalsText in integers; ok is false when a figure is negative, not
// finite, too large for 128 bits, or given otherwise than Exacts computes it from Mass.
func (f *Figures) totalsFast() (netMassKg, odpTonnes, co2eTonnes string, ok bool) {
	return f.figuresFast(nil)
}

// figuresFast is totalsFast, and when cs is not nil (one per component) each component's
// figures written into it.
func (f *Figures) figuresFast(cs []ComponentText) (netMassKg, odpTonnes, co2eTonnes string, ok bool) {
	if f.Exact != nil || (f.Mass.Unit == UnitUnspecified && f.NetMassKg != 0) || f.Mass.Value.Neg {
		return "", "", "", false
	}
	// The net mass: Value × the unit's factor × Packages (above 1), as Quantity.Kilograms.
	var m wide
	me := 0
	if fc, fe := f.Mass.Unit.factor(); fc != 0 && f.Mass.Value.Coef != 0 {
		m = wide{lo: f.Mass.Value.Coef}
		if m, ok = m.mul(fc); !ok {
			return "", "", "", false
		}
		if f.Mass.Packages > 1 {
			if m, ok = m.mul(uint64(f.Mass.Packages)); !ok {
				return "", "", "", false
			}
		}
		me = f.Mass.Value.Exp + fe
	}
	var odp, co2 wideSum
	for i := range f.Components {
		c := &f.Components[i]
		pct, ok1 := floatParts(c.MassPct)
		o, ok2 := floatParts(c.ODP)
		g, ok3 := floatParts(c.ProtocolGWP)
		if !ok1 || !ok2 || !ok3 {
			return "", "", "", false
		}
		// kg = m × share% / 100, t = kg / 1000: m × share × 10^-5.
		base, ok := m.mul(pct.coef)
		if !ok {
			return "", "", "", false
		}
		be := me + pct.exp - 5
		ot, ok := base.mul(o.coef)
		if !ok || !odp.add(ot, be+o.exp) {
			return "", "", "", false
		}
		var ct wide
		fgas := c.Group == substances.GroupFI || c.Group == substances.GroupFII
		if fgas {
			if ct, ok = base.mul(g.coef); !ok || !co2.add(ct, be+g.exp) {
				return "", "", "", false
			}
		}
		if cs != nil {
			x := &cs[i]
			x.MassPct, x.ODP, x.ProtocolGWP = pct.String(), o.String(), g.String()
			x.MassKg, x.ODPTonnes, x.CO2eTonnes = decimalText(base, be+3), decimalText(ot, be+o.exp), "0"
			if fgas {
				x.CO2eTonnes = decimalText(ct, be+g.exp)
			}
		}
	}
	return decimalText(m, me), decimalText(odp.c, odp.e), decimalText(co2.c, co2.e), true
}

// wide is an unsigned 128-bit integer.
type wide struct{ hi, lo uint64 }

func (a wide) zero() bool { return a.hi == 0 && a.lo == 0 }

// mul is a×b; ok is false when it does not fit.
func (a wide) mul(b uint64) (wide, bool) {
	h1, l1 := bits.Mul64(a.lo, b)
	h2, l2 := bits.Mul64(a.hi, b)
	if h2 != 0 {
		return wide{}, false
	}
	hi, carry := bits.Add64(h1, l2, 0)
	return wide{hi: hi, lo: l1}, carry == 0
}

// add is a+b; ok is false when it does not fit.
func (a wide) add(b wide) (wide, bool) {
	lo, c := bits.Add64(a.lo, b.lo, 0)
	hi, c2 := bits.Add64(a.hi, b.hi, c)
	return wide{hi: hi, lo: lo}, c2 == 0
}

// scale is a×10^n (n ≥ 0); ok is false when it does not fit.
func (a wide) scale(n int) (wide, bool) {
	ok := true
	for ; n > 0 && ok; n -= 19 {
		a, ok = a.mul(pow10u[min(n, 19)])
	}
	return a, ok
}

// pow10u[i] is 10^i.
var pow10u = func() (p [20]uint64) {
	p[0] = 1
	for i := 1; i < len(p); i++ {
		p[i] = p[i-1] * 10
	}
	return p
}()

// wideSum is a sum of c × 10^e terms, kept at the smallest exponent added.
type wideSum struct {
	c wide
	e int
}

// add adds t × 10^e; false when the sum does not fit.
func (s *wideSum) add(t wide, e int) bool {
	if t.zero() {
		return true
	}
	if s.c.zero() {
		s.c, s.e = t, e
		return true
	}
	ok := true
	switch {
	case e < s.e:
		s.c, ok = s.c.scale(s.e - e)
		s.e = e
	case e > s.e:
		t, ok = t.scale(e - s.e)
	}
	if !ok {
		return false
	}
	s.c, ok = s.c.add(t)
	return ok
}

// appendDigits appends a's decimal digits.
func (a wide) appendDigits(b []byte) []byte {
	if a.hi == 0 {
		return strconv.AppendUint(b, a.lo, 10)
	}
	const chunk = 1e19 // a ≥ 2^64 > 10^19, so the quotient is not zero
	qhi, rhi := a.hi/chunk, a.hi%chunk
	qlo, r := bits.Div64(rhi, a.lo, chunk)
	b = wide{hi: qhi, lo: qlo}.appendDigits(b)
	var d [19]byte
	for i := len(d) - 1; i >= 0; i-- {
		d[i] = byte('0' + r%10)
		r /= 10
	}
	return append(b, d[:]...)
}

// decimalText is c × 10^e in exact.Decimal's wire form: plain notation, no trailing zeros
// after the point, "0" for zero.
func decimalText(c wide, e int) string {
	if c.zero() {
		return "0"
	}
	var buf [64]byte
	ds := c.appendDigits(buf[:0])
	if e >= 0 {
		for ; e > 0; e-- {
			ds = append(ds, '0')
		}
		return string(ds)
	}
	n := -e // digits after the point
	end := len(ds)
	for end > 0 && end > len(ds)-n && ds[end-1] == '0' { // trailing zeros after the point
		end--
	}
	out := make([]byte, 0, max(len(ds), n)+2)
	point := len(ds) - n // digits before the point
	if point > 0 {
		out = append(out, ds[:point]...)
	} else {
		out = append(out, '0')
	}
	if end > max(point, 0) {
		out = append(out, '.')
		for i := point; i < 0; i++ {
			out = append(out, '0')
		}
		out = append(out, ds[max(point, 0):end]...)
	}
	return string(out)
}

// decParts is a non-negative float's shortest decimal (strconv's, as exact.FromFloat
// reads it) as coef × 10^exp.
type decParts struct {
	coef uint64
	exp  int
	text string // the decimal's wire text, when floatParts kept it
}

// String is the decimal's wire text (exact.Decimal.String of the same value).
func (p decParts) String() string {
	if p.text != "" {
		return p.text
	}
	return decimalText(wide{lo: p.coef}, p.exp)
}

// floatPartsKept remembers floatParts by the float's bits, as floatDecimals does for
// ofFloat (at most maxFloatDecimals).
var (
	floatPartsKept  sync.Map // uint64 → decParts
	floatPartsCount atomic.Int64
)

// floatParts is f's shortest decimal; false for a negative or non-finite f.
func floatParts(f float64) (decParts, bool) {
	if f == 0 { // 0 and -0 alike: exact.OfFloat gives 0
		return decParts{}, true
	}
	if f < 0 || math.IsNaN(f) || math.IsInf(f, 0) {
		return decParts{}, false
	}
	k := math.Float64bits(f)
	if p, ok := floatPartsKept.Load(k); ok {
		return p.(decParts), true
	}
	var buf [32]byte
	s := strconv.AppendFloat(buf[:0], f, 'e', -1, 64) // d.ddddde±dd
	var p decParts
	digits, i := 0, 0
	for ; i < len(s) && s[i] != 'e'; i++ {
		if s[i] == '.' {
			continue
		}
		p.coef = p.coef*10 + uint64(s[i]-'0')
		digits++
	}
	x, err := strconv.Atoi(string(s[i+1:]))
	if err != nil {
		return decParts{}, false
	}
	p.exp = x - (digits - 1)
	if floatPartsCount.Load() < maxFloatDecimals {
		p.text = decimalText(wide{lo: p.coef}, p.exp)
		if _, had := floatPartsKept.LoadOrStore(k, p); !had {
			floatPartsCount.Add(1)
		}
	}
	return p, true
}
