package controls

import (
	"errors"
	"slices"
	"testing"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
)

// TestCalculateFlows checks the consumption formula (Art. 1 paras 5-6, Art. 3 para 1;
// Decisions IV/24, VII/30 and X/14; Art. 2H para 6 for QPS) flow by flow.
// All quantities are a worked example, invented data.
func TestCalculateFlows(t *testing.T) {
	tests := []struct {
		name     string
		records  []Record
		counting Counting
		group    substances.Group
		wantT    float64 // metric t
		wantODP  float64 // ODP t
		wantCO2e float64 // t CO2-eq
	}{
		{
			// Exports above production + imports: 10 − 25 = −15 t; −15 × 0.055 = −0.825 ODP t;
			// HCFC-141b destroyed from stock: −5 t × 0.11 = −0.55 ODP t. Group: −1.375 ODP t.
			// Negative consumption is reported, never clamped (Art. 1 para 5 deducts destruction; the
			// Ozone Secretariat's data centre and the European Environment Agency publish negative figures).
			name: "negative consumption",
			records: []Record{
				rec(2016, hcfc22, Flows{Imports: num("10"), Exports: num("25")}),
				rec(2016, hcfc141b, Flows{Destruction: num("5")}),
			},
			group: substances.GroupCI, wantT: -20, wantODP: -1.375, wantCO2e: -15*1810 - 5*725,
		},
		{
			// Imports 100 t of CCl4, of which 40 t used entirely as feedstock: 100 − 40 = 60 t;
			// 60 × 1.1 = 66 ODP t (Art. 1 para 5, Decision VII/30).
			name:    "feedstock imports excluded",
			records: []Record{rec(2016, ccl4, Flows{Imports: num("100"), Feedstock: num("40")})},
			group:   substances.GroupBII, wantT: 60, wantODP: 66,
		},
		{
			// Production 100, exports to Parties 30, exports to non-Parties 20 (not deducted):
			// 100 − 30 = 70 t; 70 × 0.055 = 3.85 ODP t (Art. 3 para 1(c)).
			name:    "exports to non-Parties not deducted",
			records: []Record{rec(2016, hcfc22, Flows{Production: num("100"), Exports: num("30"), ExportsNonParty: num("20")})},
			group:   substances.GroupCI, wantT: 70, wantODP: 3.85, wantCO2e: 70 * 1810,
		},
		{
			// Methyl bromide imports 100 t, 70 t used for QPS: 30 t × 0.6 = 18 ODP t
			// (Art. 2H para 6).
			name:    "QPS excluded for methyl bromide",
			records: []Record{rec(2016, mbr, Flows{Imports: num("100"), QPS: num("70")})},
			group:   substances.GroupEI, wantT: 30, wantODP: 18,
		},
		{
			// Used imports 50 t, used exports 10 t, transit 500 t: none counted outside an
			// Article 5 base year: 200 t × 0.055 = 11 ODP t (Decision IV/24 para 2 [V]).
			name:     "used, recycled and transit not counted",
			records:  []Record{rec(2016, hcfc22, Flows{Imports: num("200"), UsedImports: num("50"), UsedExports: num("10"), Transit: num("500")})},
			counting: ExcludeUsed,
			group:    substances.GroupCI, wantT: 200, wantODP: 11, wantCO2e: 200 * 1810,
		},
		{
			// Same flows counted as an Article 5 base year: 200 + 50 − 10 = 240 t;
			// 240 × 0.055 = 13.2 ODP t (Decision IV/24 para 2 exception [V]).
			name:     "used counted in an Article 5 base year",
			records:  []Record{rec(2016, hcfc22, Flows{Imports: num("200"), UsedImports: num("50"), UsedExports: num("10"), Transit: num("500")})},
			counting: IncludeUsed,
			group:    substances.GroupCI, wantT: 240, wantODP: 13.2, wantCO2e: 240 * 1810,
		},
		{
			// Two records of one substance and year are added: (30 + 20) × 1430 = 71 500 t CO2-eq.
			name: "records of one substance added",
			records: []Record{
				rec(2016, hfc134a, Flows{Imports: num("30")}),
				rec(2016, hfc134a, Flows{Imports: num("20")}),
			},
			group: substances.GroupFI, wantT: 50, wantCO2e: 71500,
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c, err := Calculate(tc.records, tc.counting)
			if err != nil {
				t.Fatalf("Calculate: %v", err)
			}
			g, ok := c.Group(2016, tc.group)
			if !ok {
				t.Fatalf("no %s group in 2016", tc.group)
			}
			near(t, "tonnes", g.Tonnes, tc.wantT, tolT)
			near(t, "ODP t", g.ODPTonnes, tc.wantODP, tolODP)
			near(t, "CO2-eq t", g.CO2eTonnes, tc.wantCO2e, tolCO2e)
		})
	}
}

// TestCalculateSubstanceBreakdown checks the per-substance rows and ordering.
func TestCalculateSubstanceBreakdown(t *testing.T) {
	// Worked example, invented data.
	c, err := Calculate([]Record{
		rec(2016, hcfc141b, Flows{Imports: num("10")}),
		rec(2016, hcfc22, Flows{Imports: num("100")}),
		rec(2015, hfc134a, Flows{Imports: num("1")}),
	}, ExcludeUsed)
	if err != nil {
		t.Fatal(err)
	}
	if len(c.Groups) != 2 || c.Groups[0].Year != 2015 || c.Groups[1].Group != substances.GroupCI {
		t.Fatalf("groups not sorted by year then Annex: %+v", c.Groups)
	}
	g := c.Groups[1]
	if len(g.Substances) != 2 || g.Substances[0].Substance.Designation != "HCFC-141b" {
		t.Fatalf("substances not sorted by designation: %+v", g.Substances)
	}
	near(t, "HCFC-141b ODP t", g.Substances[0].ODPTonnes, 1.1, tolODP) // 10 × 0.11, MP Annex C Group I ODP
	near(t, "HCFC-22 ODP t", g.Substances[1].ODPTonnes, 5.5, tolODP)   // 100 × 0.055
	near(t, "group ODP t", g.ODPTonnes, 6.6, tolODP)
	if _, ok := c.Amount(2016, ScopeCI, Unit("kg")); ok {
		t.Error("Amount with an unknown unit should report ok = false")
	}
	if amt, ok := c.Amount(2016, ScopeF, UnitCO2eTonnes); ok || !amt.IsZero() {
		t.Errorf("Amount(2016, F) = %v, %v; want 0, false (no HFC record in 2016)", amt, ok)
	}
}

// TestBlendCountedPerComponent: R-402A is HFC-125/R-290/HCFC-22 60/2/38 % by mass (source:
// ASHRAE 34 composition, testdata/reference/blend_components.csv). Importing 10 t counts
// 3.8 t HCFC-22 in C/I (3.8 × 0.055 = 0.209 ODP t) and 6 t HFC-125 in F/I (6 × 3500 = 21 000
// t CO2-eq); propane is not controlled (Art. 1 para 4: a controlled substance counts
// alone or in a mixture, so each controlled component counts in its own group). Import quantity: worked example, invented data.
func TestBlendCountedPerComponent(t *testing.T) {
	r402a := []substances.Component{{Designation: "HFC-125", MassPct: 60}, {Designation: "R-290", MassPct: 2}, {Designation: "HCFC-22", MassPct: 38}}
	parts, err := SplitMass(num("10"), r402a)
	if err != nil {
		t.Fatalf("SplitMass: %v", err)
	}
	want := map[string]float64{"HFC-125": 6, "R-290": 0.2, "HCFC-22": 3.8}
	byDes := map[string]Substance{"HFC-125": hfc125, "R-290": propane, "HCFC-22": hcfc22}
	var records []Record
	for _, p := range parts {
		near(t, p.Designation+" tonnes", p.Tonnes, want[p.Designation], tolT)
		records = append(records, rec(2024, byDes[p.Designation], Flows{Imports: p.Tonnes}))
	}
	// Pure HCFC-22 imported the same year (1 t) adds to the component's 3.8 t.
	records = append(records, rec(2024, hcfc22, Flows{Imports: num("1")}))
	c, err := Calculate(records, ExcludeUsed)
	if err != nil {
		t.Fatal(err)
	}
	ci, _ := c.Group(2024, substances.GroupCI)
	near(t, "C/I ODP t", ci.ODPTonnes, 4.8*0.055, tolODP) // (3.8 + 1) × 0.055 = 0.264
	exactly(t, "C/I ODP t", ci.ODPTonnes, "0.264")
	f, ok := c.Amount(2024, ScopeF, UnitCO2eTonnes)
	if !ok {
		t.Fatal("no Annex F consumption")
	}
	near(t, "F CO2-eq t", f, 21000, tolCO2e) // HCFC-22's GWP does not count in Annex F
	if !slices.Equal(c.Uncontrolled, []string{"R-290"}) {
		t.Errorf("Uncontrolled = %v, want [R-290]", c.Uncontrolled)
	}
	scaled := Flows{Imports: num("10"), Exports: num("5")}.Scaled(num("0.38"))
	near(t, "scaled imports", scaled.Imports, 3.8, tolT)
	near(t, "scaled exports", scaled.Exports, 1.9, tolT)
}

func TestSplitMassRejects(t *testing.T) {
	tests := []struct {
		name  string
		mass  exact.Decimal
		comps []substances.Component
		field string
	}{
		{"negative mass", num("-1"), []substances.Component{{Designation: "HFC-32", MassPct: 100}}, "tonnes"},
		{"no components", num("1"), nil, "components"},
		{"empty designation", num("1"), []substances.Component{{Designation: " ", MassPct: 100}}, "components[0].designation"},
		{"duplicate", num("1"), []substances.Component{{Designation: "HFC-32", MassPct: 50}, {Designation: "HFC-32", MassPct: 50}}, "components[1].designation"},
		{"zero share", num("1"), []substances.Component{{Designation: "HFC-32", MassPct: 0}, {Designation: "HFC-125", MassPct: 100}}, "components[0].mass_pct"},
		{"sum not 100", num("1"), []substances.Component{{Designation: "HFC-32", MassPct: 50}, {Designation: "HFC-125", MassPct: 49}}, "components"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := SplitMass(tc.mass, tc.comps)
			var fe *FieldError
			if !errors.As(err, &fe) || fe.Field != tc.field || !errors.Is(err, ErrInvalidInput) {
				t.Fatalf("err = %v; want a FieldError on %s", err, tc.field)
			}
		})
	}
}

func TestCalculateRejects(t *testing.T) {
	tests := []struct {
		name    string
		records []Record
		field   string
	}{
		{"QPS outside Annex E", []Record{rec(2016, hcfc22, Flows{Imports: num("10"), QPS: num("1")})}, "records[0].flows.qps"},
		{"negative flow", []Record{rec(2016, hcfc22, Flows{Imports: num("-1")})}, "records[0].flows.imports"},
		{"year out of range", []Record{rec(1850, hcfc22, Flows{})}, "records[0].year"},
		{"empty designation", []Record{rec(2016, Substance{Group: substances.GroupCI, ODP: num("0.1")}, Flows{})}, "records[0].substance.designation"},
		{"unknown group", []Record{rec(2016, Substance{"X", "G/I", num("1"), num("0")}, Flows{})}, "records[0].substance.group"},
		{"ODP missing for an HCFC", []Record{rec(2016, Substance{"HCFC-22", substances.GroupCI, num("0"), num("1810")}, Flows{})}, "records[0].substance.odp"},
		{"GWP missing for an HFC", []Record{rec(2016, Substance{"HFC-32", substances.GroupFI, num("0"), num("0")}, Flows{})}, "records[0].substance.gwp"},
		{"inconsistent factors", []Record{rec(2016, hcfc22, Flows{}), rec(2017, Substance{"HCFC-22", substances.GroupCI, num("0.05"), num("1810")}, Flows{})}, "records[1].substance"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Calculate(tc.records, ExcludeUsed)
			var fe *FieldError
			if !errors.As(err, &fe) || fe.Field != tc.field || !errors.Is(err, ErrInvalidInput) {
				t.Fatalf("err = %v; want a FieldError on %s", err, tc.field)
			}
			if fe.Accepted == "" || fe.Problem == "" {
				t.Errorf("error lacks problem or accepted text: %+v", fe)
			}
		})
	}
}

func TestParseScope(t *testing.T) {
	tests := []struct {
		in      string
		want    Scope
		wantErr bool
	}{
		{"C/I", ScopeCI, false},
		{" b/iii ", ScopeBIII, false},
		{"F/II", ScopeF, false}, // Annex F is controlled as a whole (Art. 2J para 1)
		{"F", ScopeF, false},
		{"D/I", "", true},
		{"", "", true},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			got, err := ParseScope(tc.in)
			if (err != nil) != tc.wantErr || got != tc.want {
				t.Fatalf("ParseScope(%q) = %q, %v; want %q, error %v", tc.in, got, err, tc.want, tc.wantErr)
			}
			if err != nil && !errors.Is(err, ErrInvalidInput) {
				t.Errorf("error does not wrap ErrInvalidInput: %v", err)
			}
		})
	}
	if ScopeOf(substances.GroupFII) != ScopeF || ScopeOf(substances.GroupCI) != ScopeCI || ScopeOf(substances.GroupNone) != "" {
		t.Error("ScopeOf maps groups wrongly")
	}
	if ScopeF.Unit() != UnitCO2eTonnes || ScopeCI.Unit() != UnitODPTonnes {
		t.Error("Annex F is compared in CO2-eq t, Annexes A–E in ODP t (Art. 3)")
	}
}

// TestSubstanceOf takes the Protocol GWP (SetProtocol) and ignores other GWP sets.
// HCFC-22: ODP 0.055, Protocol GWP 1810 (MP Annex C Group I, Kigali GWP column); AR5 1760
// (IPCC AR5 WG1 Table 8.A.1; testdata/reference/halocarbons.csv gwp100_ar5).
func TestSubstanceOf(t *testing.T) {
	s := &substances.Substance{Designation: "HCFC-22", Group: substances.GroupCI, ODP: 0.055,
		GWP: map[substances.GWPSet]float64{substances.SetProtocol: 1810, substances.SetAR5: 1760}}
	if got := SubstanceOf(s); !got.same(hcfc22) {
		t.Errorf("SubstanceOf = %+v, want %+v", got, hcfc22)
	}
	noGWP := &substances.Substance{Designation: "HCFC-31", Group: substances.GroupCI, ODP: 0.02}
	if got := SubstanceOf(noGWP); !got.same(hcfc31) {
		t.Errorf("SubstanceOf without a Protocol GWP = %+v, want GWP 0 (%+v)", got, hcfc31)
	}
}
