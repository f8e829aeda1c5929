package validate

import (
	"strings"
	"testing"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
)

// TestExactsAreExact: the figures a verdict shows are the exact decimal products and sums
// of the declared quantity and the catalogue's shares, ODPs and GWPs, also where the
// float64 figures of the checker carry binary noise.
func TestExactsAreExact(t *testing.T) {
	env := testEnv(t)
	cases := []struct {
		name                  string
		edit                  func(r *Record)
		kg, odpT, co2e        string
		componentOdpT, compKg []string
	}{
		// 13.6 kg × ODP 0.055 / 1000 = 0.000748 ODP t. source: ODP of HCFC-22, Montreal
		// Protocol Annex C Group I.
		{"HCFC-22 13.6 kg", func(r *Record) { r.TotalQuantity = "13.6" }, "13.6", "0.000748", "0", []string{"0.000748"}, []string{"13.6"}},
		// 100 lb = 45.359237 kg exactly (international yard and pound agreement, 1959);
		// × 0.055 / 1000 = 0.002494758035 ODP t (Annex C Group I).
		{"HCFC-22 100 lb", func(r *Record) { r.TotalQuantity, r.Unit = "100", "lb" }, "45.359237", "0.002494758035", "0", []string{"0.002494758035"}, []string{"45.359237"}},
		// 0.3 kg × ODP 0.055 / 1000 = 0.0000165 ODP t; the checker's float64 figure is
		// 1.6499999999999998e-05. source: ODP of HCFC-22, Montreal Protocol Annex C Group I.
		{"HCFC-22 0.3 kg, noisy float", func(r *Record) { r.TotalQuantity, r.PackageCount = "0.3", 0 }, "0.3", "0.0000165", "0", []string{"0.0000165"}, []string{"0.3"}},
		// 0.1 kg of R-410A: 0.00005 t × 675 + 0.00005 t × 3500 = 0.20875 CO2-eq t (Annex F GWPs,
		// ASHRAE 34 composition 50/50); the float64 figure is 0.20875000000000002.
		{"R-410A 0.1 kg, noisy float", func(r *Record) {
			r.Substance, r.HSCode, r.CAS, r.Formula = "R-410A", "", "", ""
			r.TotalQuantity, r.PackageCount = "0.1", 0
		}, "0.1", "0", "0.20875", []string{"0", "0"}, []string{"0.05", "0.05"}},
		// 11.3 kg per package × 10 packages = 113 kg of R-410A (HFC-32/HFC-125 50/50, ASHRAE 34):
		// 0.0565 t × 675 + 0.0565 t × 3500 = 38.1375 + 197.75 CO2-eq t (Annex F GWPs); ODP 0.
		{"R-410A fill × packages", func(r *Record) {
			r.Substance, r.HSCode, r.CAS, r.Formula = "R-410A", "", "", ""
			r.TotalQuantity, r.FillPerPackage, r.PackageCount = "", "11.3", 10
		}, "113", "0", "235.8875", []string{"0", "0"}, []string{"56.5", "56.5"}},
		// 0.3 t of R-404A (HFC-125/HFC-143a/HFC-134a 44/52/4, ASHRAE 34) = 300 kg:
		// 0.132 t × 3500 + 0.156 t × 4470 + 0.012 t × 1430 = 462 + 697.32 + 17.16 (Annex F GWPs).
		{"R-404A in tonnes", func(r *Record) {
			r.Substance, r.HSCode, r.CAS, r.Formula = "R-404A", "", "", ""
			r.TotalQuantity, r.Unit = "0.3", "t"
		}, "300", "0", "1176.48", []string{"0", "0", "0"}, []string{"132", "156", "12"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := baseRecord()
			c.edit(&r)
			v := Check(env, &r, nil)
			if !v.Resolved {
				t.Fatalf("not resolved: %v", v.Findings)
			}
			x := v.Figures.Exacts()
			if x.NetMassKg.String() != c.kg || x.ODPTonnes.String() != c.odpT || x.CO2eTonnes.String() != c.co2e {
				t.Errorf("net mass %s kg, %s ODP t, %s CO2-eq t; want %s, %s, %s (float figures %v, %v, %v)",
					x.NetMassKg, x.ODPTonnes, x.CO2eTonnes, c.kg, c.odpT, c.co2e, v.Figures.NetMassKg, v.Figures.ODPTonnes, v.Figures.CO2eTonnes)
			}
			if len(x.Components) != len(c.compKg) {
				t.Fatalf("%d components, want %d", len(x.Components), len(c.compKg))
			}
			for i := range x.Components {
				if x.Components[i].MassKg.String() != c.compKg[i] || x.Components[i].ODPTonnes.String() != c.componentOdpT[i] {
					t.Errorf("component %d: %s kg, %s ODP t; want %s, %s", i, x.Components[i].MassKg, x.Components[i].ODPTonnes, c.compKg[i], c.componentOdpT[i])
				}
			}
			if strings.Contains(c.name, "noisy") && exact.OfFloat(v.Figures.ODPTonnes).Equal(x.ODPTonnes) && exact.OfFloat(v.Figures.CO2eTonnes).Equal(x.CO2eTonnes) {
				t.Errorf("the float64 figures %v ODP t, %v CO2-eq t carry no noise; the case proves nothing", v.Figures.ODPTonnes, v.Figures.CO2eTonnes)
			}
			// The same figures as the catalogue's own exact evaluation of the exact mass.
			ev, err := env.Catalogue.EvaluateExact(v.Figures.Designation, exact.MustParse(c.kg))
			if err != nil {
				t.Fatal(err)
			}
			if !ev.Exact.ODPTonnes.Equal(x.ODPTonnes) || !ev.Exact.CO2eTonnes.Equal(x.CO2eTonnes) {
				t.Errorf("catalogue's exact evaluation: %s ODP t, %s CO2-eq t; Exacts: %s, %s", ev.Exact.ODPTonnes, ev.Exact.CO2eTonnes, x.ODPTonnes, x.CO2eTonnes)
			}
		})
	}
}

// TestExactsPrefersTheWire: figures read back from the wire keep the decimals they came
// with.
func TestExactsPrefersTheWire(t *testing.T) {
	x := &FiguresExact{NetMassKg: exact.MustParse("13.6"), ODPTonnes: exact.MustParse("0.000748"), CO2eTonnes: exact.Zero}
	f := Figures{NetMassKg: 13.6, ODPTonnes: 13.6 * 0.055 / 1000, Exact: x,
		Components: []substances.ComponentFigures{{Designation: "HCFC-22", MassPct: 100, ODP: 0.055}}}
	if got := f.Exacts(); got.ODPTonnes.String() != "0.000748" || len(got.Components) != 0 {
		t.Errorf("Exacts of wire figures: %s ODP t, %d components; want 0.000748 and the wire's 0", got.ODPTonnes, len(got.Components))
	}
}

// TestCheckKeepsDeclaredQuantity: the verdict carries the declared quantity (by value, no
// allocation) that Exacts computes the net mass from.
func TestCheckKeepsDeclaredQuantity(t *testing.T) {
	env := testEnv(t)
	r := baseRecord()
	_ = Check(env, &r, nil)
	v := Check(env, &r, nil)
	if v.Figures.Mass.Unit != UnitKilogram || v.Figures.Mass.Value.String() != "136" || v.Figures.Mass.Packages != 0 {
		t.Errorf("Mass %+v; want 136 kg as declared", v.Figures.Mass)
	}
}
