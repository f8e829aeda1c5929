package validate

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/halovet/halovet/substances"
)

// TestTotalsTextIsExacts: the integer totals (TotalsText) and the integer figures with
// their components (ExactsText) give, digit for digit, the strings of the exact decimals
// Exacts computes: every entry of the seed catalogue at masses in every
// unit, with and without packages, tiny and huge; random declared compositions; and the
// cases the integers hand back to Exacts (a figure read from the wire, a negative mass).
func TestTotalsTextIsExacts(t *testing.T) {
	cat := testCatalogue(t)
	var names []string
	for _, s := range cat.Substances() {
		names = append(names, s.Designation)
	}
	for _, b := range cat.Blends() {
		names = append(names, b.Designation)
	}
	masses := []Quantity{
		{Value: Decimal{Coef: 136, Exp: -1}, Unit: UnitKilogram},
		{Value: Decimal{Coef: 25, Exp: -1}, Unit: UnitTonne},
		{Value: Decimal{Coef: 30, Exp: 0}, Unit: UnitPound},
		{Value: Decimal{Coef: 113, Exp: -1}, Unit: UnitKilogram, Packages: 40},
		{Value: Decimal{Coef: 1, Exp: -9}, Unit: UnitKilogram},
		{Value: Decimal{Coef: 1, Exp: -3}, Unit: UnitGram},
		{Value: Decimal{Coef: 999_999_999_999_999_999, Exp: -4}, Unit: UnitPound, Packages: 1 << 20},
		{Value: Decimal{Coef: 100000, Exp: 0}, Unit: UnitTonne},
		{Value: Decimal{Coef: 0}, Unit: UnitKilogram},
		{Value: Decimal{Coef: 5}, Unit: UnitUnspecified},
	}
	check := func(what string, f *Figures) {
		t.Helper()
		x := f.Exacts()
		n, o, c := f.TotalsText()
		if n != x.NetMassKg.String() || o != x.ODPTonnes.String() || c != x.CO2eTonnes.String() {
			t.Errorf("%s: TotalsText %s, %s, %s; Exacts %s, %s, %s", what, n, o, c, x.NetMassKg, x.ODPTonnes, x.CO2eTonnes)
		}
		xt := f.ExactsText()
		if xt.NetMassKg != x.NetMassKg.String() || xt.ODPTonnes != x.ODPTonnes.String() || xt.CO2eTonnes != x.CO2eTonnes.String() {
			t.Errorf("%s: ExactsText totals %s, %s, %s; Exacts %s, %s, %s", what, xt.NetMassKg, xt.ODPTonnes, xt.CO2eTonnes, x.NetMassKg, x.ODPTonnes, x.CO2eTonnes)
		}
		if len(xt.Components) != len(x.Components) {
			t.Fatalf("%s: ExactsText gives %d components, Exacts %d", what, len(xt.Components), len(x.Components))
		}
		for i, xc := range x.Components {
			want := ComponentText{MassPct: xc.MassPct.String(), MassKg: xc.MassKg.String(), ODP: xc.ODP.String(),
				ODPTonnes: xc.ODPTonnes.String(), ProtocolGWP: xc.ProtocolGWP.String(), CO2eTonnes: xc.CO2eTonnes.String()}
			if xt.Components[i] != want {
				t.Errorf("%s: component %d: ExactsText %+v; Exacts %+v", what, i, xt.Components[i], want)
			}
		}
	}
	fast := 0
	for _, name := range names {
		for _, m := range masses {
			ev, err := cat.Evaluate(name, 1)
			if err != nil {
				t.Fatalf("%s: %v", name, err)
			}
			f := Figures{Components: ev.Components, Mass: m}
			check(name, &f)
			if _, _, _, ok := f.totalsFast(); ok {
				fast++
			}
		}
	}
	if fast < len(names)*len(masses)/2 {
		t.Errorf("only %d of %d catalogue figures took the integer path", fast, len(names)*len(masses))
	}
	r := rand.New(rand.NewPCG(17, 9))
	groups := []substances.Group{substances.GroupFI, substances.GroupFII, "C/I", "A/I", ""}
	for range 5000 {
		var comps []substances.ComponentFigures
		for range 1 + r.IntN(4) {
			comps = append(comps, substances.ComponentFigures{Group: groups[r.IntN(len(groups))],
				MassPct: randFigure(r), ODP: randFigure(r), ProtocolGWP: randFigure(r)})
		}
		m := Quantity{Value: Decimal{Coef: r.Uint64N(1_000_000_000_000_000_000), Exp: -r.IntN(12)}, Unit: Unit(1 + r.IntN(4)),
			Packages: r.Int64N(3) * r.Int64N(1000)}
		f := Figures{Components: comps, Mass: m}
		check("random", &f)
	}
	// Handed back to Exacts.
	neg := Figures{Components: []substances.ComponentFigures{{Group: substances.GroupFI, MassPct: 100, ProtocolGWP: 675}},
		Mass: Quantity{Value: Decimal{Coef: 5, Neg: true}, Unit: UnitKilogram}}
	check("negative mass", &neg)
	if _, _, _, ok := neg.totalsFast(); ok {
		t.Error("a negative mass took the integer path")
	}
	nan := Figures{Components: []substances.ComponentFigures{{Group: substances.GroupFI, MassPct: 100, ProtocolGWP: math.NaN()}},
		Mass: Quantity{Value: Decimal{Coef: 5}, Unit: UnitKilogram}}
	check("NaN GWP", &nan)
	if _, _, _, ok := nan.figuresFast(make([]ComponentText, 1)); ok {
		t.Error("a NaN GWP took the integer path")
	}
}

// randFigure is a share, ODP or GWP of the kinds the catalogue and declarations carry:
// whole, short decimals, tiny, long, zero, or the result of float arithmetic.
func randFigure(r *rand.Rand) float64 {
	switch r.IntN(6) {
	case 0:
		return float64(r.IntN(15000))
	case 1:
		return float64(r.IntN(100000)) / 1000
	case 2:
		return float64(r.IntN(1000)) * 1e-7
	case 3:
		return 0
	case 4:
		return r.Float64() * 100
	}
	return 0.1 + 0.2*float64(r.IntN(7))
}
