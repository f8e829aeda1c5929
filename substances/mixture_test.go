package substances

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// roundHalfUp rounds to the integer, halves up, as the published blend GWPs are rounded
// (UK government guidance "Calculate the carbon dioxide equivalent quantity of an F gas":
// R-407F 1824.5 -> 1825, R-410A 2087.5 -> 2088; testdata/reference/blends.csv). The small
// allowance absorbs binary floating-point error in sums such as 0.3 × 675.
func roundHalfUp(x float64) float64 { return math.Floor(x + 0.5 + 1e-9) }

func near(a, b float64) bool { return math.Abs(a-b) <= 1e-9*math.Max(1, math.Abs(b)) }

func mustEvaluate(t *testing.T, c *Catalogue, name string, kg float64) Evaluation {
	t.Helper()
	ev, err := c.Evaluate(name, kg)
	if err != nil {
		t.Fatalf("Evaluate(%q, %g): %v", name, kg, err)
	}
	return ev
}

func gwpOf(t *testing.T, ev Evaluation, set GWPSet, conv GWPConvention) GWPFigure {
	t.Helper()
	g, ok := ev.GWP(set, conv)
	if !ok {
		t.Fatalf("%s has no %s %s figure", ev.Designation, set, conv)
	}
	return g
}

func TestBlendGWPWorkedExamples(t *testing.T) {
	c := testCatalogue(t)
	tests := []struct {
		blend string
		set   GWPSet
		conv  GWPConvention
		want  float64
	}{
		// source: AR4-basis blend GWPs (the method of Regulation (EU) No 517/2014 Annex IV); R-404A,
		// R-410A and R-507A printed by the UK government CO2e table (testdata/reference/blends.csv
		// gwp_ar4_published). The R-407C value was not found in a stored copy of a table (memory of the EU figure).
		{"R-404A", SetAR4, ConventionAnnexFOnly, 3922},
		{"R-407C", SetAR4, ConventionAnnexFOnly, 1774},
		{"R-410A", SetAR4, ConventionAnnexFOnly, 2088},
		{"R-507A", SetAR4, ConventionAnnexFOnly, 3985},
		// The Protocol's own GWPs (Annex F) give the same figures for HFC-only blends.
		{"R-404A", SetProtocol, ConventionAnnexFOnly, 3922},
		{"R-410A", SetProtocol, ConventionAnnexFOnly, 2088},
		// source: UK government CO2e table and testdata/reference/blends.csv: R-438A is 2264 counting its
		// HFCs only (UK published value) and 2265 with butane 4 and isopentane 5 (EU 517/2014 Annex IV).
		{"R-438A", SetAR4, ConventionAnnexFOnly, 2264},
		{"R-438A", SetAR4, ConventionAllComponents, 2265},
		// source: UK government CO2e table (testdata/reference/blends.csv), R-417A 2346 (HFCs only).
		{"R-417A", SetAR4, ConventionAnnexFOnly, 2346},
	}
	for _, tc := range tests {
		t.Run(tc.blend+"/"+string(tc.set)+"/"+string(tc.conv), func(t *testing.T) {
			g := gwpOf(t, mustEvaluate(t, c, tc.blend, 1), tc.set, tc.conv)
			if got := roundHalfUp(g.GWP); got != tc.want || !g.Complete {
				t.Errorf("GWP %.3f rounds to %g (complete %v), want %g", g.GWP, got, g.Complete, tc.want)
			}
		})
	}
}

func TestEvaluateSubstance(t *testing.T) {
	c := testCatalogue(t)
	t.Run("1000 kg HCFC-141b is 0.11 ODP tonnes", func(t *testing.T) {
		// source: Montreal Protocol Annex C Group I, HCFC-141b ODP 0.11
		ev := mustEvaluate(t, c, "HCFC-141b", 1000)
		if !near(ev.ODPTonnes, 0.11) || ev.CO2eTonnes != 0 || ev.Kind != KindSubstance {
			t.Errorf("ODP t %g, CO2e t %g, kind %v; want 0.11, 0 (HCFCs count in ODP tonnes), substance", ev.ODPTonnes, ev.CO2eTonnes, ev.Kind)
		}
		if len(ev.Components) != 1 || ev.Components[0].MassKg != 1000 || ev.Components[0].Group != GroupCI {
			t.Errorf("components %+v", ev.Components)
		}
		// source: Kigali Annex C GWP of HCFC-141b 725, shown but not counted in CO2e
		if ev.Components[0].ProtocolGWP != 725 {
			t.Errorf("Protocol GWP %g, want 725", ev.Components[0].ProtocolGWP)
		}
	})
	t.Run("10 kg HFC-134a is 14.3 CO2-eq tonnes", func(t *testing.T) {
		// source: Annex F GWP of HFC-134a 1430: 0.01 t × 1430
		ev := mustEvaluate(t, c, "R-134a", 10)
		if !near(ev.CO2eTonnes, 14.3) || ev.ODPTonnes != 0 || ev.Designation != "HFC-134a" {
			t.Errorf("%s: CO2e t %g, ODP t %g; want HFC-134a 14.3, 0", ev.Designation, ev.CO2eTonnes, ev.ODPTonnes)
		}
	})
	t.Run("methyl bromide by CAS", func(t *testing.T) {
		// source: Annex E ODP 0.6; CAS 74-83-9 (IPCC AR6 7.SM.7)
		ev := mustEvaluate(t, c, "74-83-9", 500)
		if ev.Designation != "methyl bromide" || !near(ev.ODPTonnes, 0.3) {
			t.Errorf("%s ODP t %g, want methyl bromide 0.3", ev.Designation, ev.ODPTonnes)
		}
		if ev.HS2022 != "2903.61" || ev.HS2017 != "2903.39" {
			t.Errorf("HS %s / %s, want 2903.61 / 2903.39 (WCO HS 2022 and HS 2017)", ev.HS2022, ev.HS2017)
		}
	})
	t.Run("isomer group uses the upper ODP", func(t *testing.T) {
		// source: Annex C, C2H2F3Cl range 0.02-0.06, the upper value counts
		ev := mustEvaluate(t, c, "HCFC-133", 1000)
		if !near(ev.ODPTonnes, 0.06) {
			t.Errorf("ODP t %g, want 0.06", ev.ODPTonnes)
		}
	})
	t.Run("shared HS subheading is flagged", func(t *testing.T) {
		ev := mustEvaluate(t, c, "HCFC-124", 1)
		if ev.HS2022 != "2903.79" || !strings.Contains(ev.HSNote, "not controlled") {
			t.Errorf("HS %s note %q", ev.HS2022, ev.HSNote)
		}
	})
}

func TestEvaluateBlend(t *testing.T) {
	c := testCatalogue(t)
	t.Run("HCFC blend counts ODP per component, CO2e for its HFC only", func(t *testing.T) {
		// source: R-401A = HCFC-22/HFC-152a/HCFC-124 53/13/34 (ASHRAE 34); ODPs 0.055 and 0.022
		// (Annex C); HFC-152a GWP 124 (Annex F). 100 kg: 53 kg × 0.055 + 34 kg × 0.022 = 3.663 ODP kg.
		ev := mustEvaluate(t, c, "R-401A", 100)
		if !near(ev.ODPTonnes, 0.003663) || !near(ev.CO2eTonnes, 0.013*124) {
			t.Errorf("ODP t %g CO2e t %g; want 0.003663 and 1.612", ev.ODPTonnes, ev.CO2eTonnes)
		}
		want := map[string][2]float64{"HCFC-22": {53, 0.053 * 0.055}, "HFC-152a": {13, 0}, "HCFC-124": {34, 0.034 * 0.022}}
		for _, cf := range ev.Components {
			w := want[cf.Designation]
			if cf.MassKg != w[0] || !near(cf.ODPTonnes, w[1]) {
				t.Errorf("%s: %g kg, %g ODP t; want %g kg, %g", cf.Designation, cf.MassKg, cf.ODPTonnes, w[0], w[1])
			}
		}
		if !near(ev.ODP, 0.03663) {
			t.Errorf("blend ODP %g, want 0.03663", ev.ODP)
		}
		// Both conventions are reported: the HCFCs' AR4 GWPs count only under all-components.
		// source: reference blends.csv R-401A 1182.48 (all) and 16.12 (HFC/PFC only)
		if g := gwpOf(t, ev, SetAR4, ConventionAllComponents); !near(g.GWP, 1182.48) {
			t.Errorf("AR4 all-components %g, want 1182.48", g.GWP)
		}
		if g := gwpOf(t, ev, SetAR4, ConventionAnnexFOnly); !near(g.GWP, 16.12) {
			t.Errorf("AR4 annex-f-only %g, want 16.12", g.GWP)
		}
	})
	t.Run("CFC blend", func(t *testing.T) {
		// source: R-502 = HCFC-22/CFC-115 48.8/51.2 (ASHRAE 34); ODPs 0.055 and 0.6
		ev := mustEvaluate(t, c, "R-502", 1000)
		if !near(ev.ODPTonnes, 0.488*0.055+0.512*0.6) || ev.CO2eTonnes != 0 {
			t.Errorf("ODP t %g CO2e t %g", ev.ODPTonnes, ev.CO2eTonnes)
		}
		// source: WCO HS 2022 3827.11 and HS 2017 3824.71 (mixtures containing CFCs)
		if ev.HS2022 != "3827.11" || ev.HS2017 != "3824.71" {
			t.Errorf("HS %s / %s, want 3827.11 / 3824.71", ev.HS2022, ev.HS2017)
		}
	})
	t.Run("HFC blend HS codes", func(t *testing.T) {
		// source: WCO HS 2022 3827.61 (>= 15 % HFC-143a); HS 2017 3824.78
		ev := mustEvaluate(t, c, "R-404A", 1)
		if ev.HS2022 != "3827.61" || ev.HS2017 != "3824.78" {
			t.Errorf("HS %s / %s, want 3827.61 / 3824.78", ev.HS2022, ev.HS2017)
		}
	})
	t.Run("completeness of the GWP sets", func(t *testing.T) {
		ev := mustEvaluate(t, c, "R-438A", 1)
		// AR4: butane and isopentane have EU 517/2014 Annex IV values; AR6 7.SM.7 has butane
		// but not isopentane; AR5 8.A.1 has neither.
		for _, tc := range []struct {
			set  GWPSet
			want bool
		}{{SetAR4, true}, {SetAR5, false}, {SetAR6, false}} {
			if g := gwpOf(t, ev, tc.set, ConventionAllComponents); g.Complete != tc.want {
				t.Errorf("%s all-components complete = %v, want %v", tc.set, g.Complete, tc.want)
			}
			if g := gwpOf(t, ev, tc.set, ConventionAnnexFOnly); !g.Complete {
				t.Errorf("%s annex-f-only incomplete: every HFC has the value", tc.set)
			}
		}
		if len(ev.GWPs) != 7 || ev.GWPs[0].Set != SetProtocol || ev.GWPs[0].Convention != ConventionAnnexFOnly {
			t.Errorf("GWPs %+v: want MP annex-f-only first, then AR4, AR5, AR6 in both conventions", ev.GWPs)
		}
	})
	t.Run("a call scales, the cache stays intact", func(t *testing.T) {
		a := mustEvaluate(t, c, "R-404A", 1000)
		b := mustEvaluate(t, c, "R-404A", 250)
		if !near(a.CO2eTonnes, 4*b.CO2eTonnes) || !near(a.CO2eTonnes, 3921.6) {
			t.Errorf("1000 kg: %g t, 250 kg: %g t; want 3921.6 and a quarter of it", a.CO2eTonnes, b.CO2eTonnes)
		}
		a.Components[0].MassKg = -1
		if c2 := mustEvaluate(t, c, "R-404A", 1000); c2.Components[0].MassKg == -1 {
			t.Error("a caller's change leaked into the cached evaluation")
		}
		if zero := mustEvaluate(t, c, "R-404A", 0); zero.CO2eTonnes != 0 || zero.NetMassKg != 0 {
			t.Errorf("0 kg gives %g t", zero.CO2eTonnes)
		}
	})
}

func TestEvaluateShares(t *testing.T) {
	c := testCatalogue(t)
	t.Run("an ad-hoc R-404A equals the seeded blend", func(t *testing.T) {
		ev, err := c.EvaluateShares([]Share{{"R-125", 44}, {"1,1,1-trifluoroethane", 52}, {"811-97-2", 4}}, 1000)
		if err != nil {
			t.Fatal(err)
		}
		want := mustEvaluate(t, c, "R-404A", 1000)
		if !near(ev.CO2eTonnes, want.CO2eTonnes) || ev.Designation != "" || ev.Kind != KindBlend {
			t.Errorf("ad hoc %q %v: %g t, seeded %g t", ev.Designation, ev.Kind, ev.CO2eTonnes, want.CO2eTonnes)
		}
		for i, g := range ev.GWPs {
			if !near(g.GWP, want.GWPs[i].GWP) {
				t.Errorf("%s %s: %g, seeded %g", g.Set, g.Convention, g.GWP, want.GWPs[i].GWP)
			}
		}
		if ev.HS2022 != "3827.61" {
			t.Errorf("HS 2022 %q, want 3827.61", ev.HS2022)
		}
	})
	t.Run("one substance at 100 %", func(t *testing.T) {
		ev, err := c.EvaluateShares([]Share{{"CHClF2", 100}}, 2000)
		if err != nil || ev.Designation != "HCFC-22" || !near(ev.ODPTonnes, 0.11) {
			t.Errorf("got %q %g ODP t, %v; want HCFC-22 0.11", ev.Designation, ev.ODPTonnes, err)
		}
	})
	t.Run("flammable component without a class", func(t *testing.T) {
		ev, err := c.EvaluateShares([]Share{{"R-22", 95}, {"propane", 5}}, 1)
		if err != nil {
			t.Fatal(err)
		}
		if ev.SafetyClass != "" || !strings.Contains(ev.Cautions[0], "R-290 (A3)") {
			t.Errorf("class %q, cautions %q: want a caution naming the flammable propane", ev.SafetyClass, ev.Cautions)
		}
	})

	tests := []struct {
		name   string
		shares []Share
		kg     float64
		is     error
		field  string // for InputError / IdentifierError
		msg    string
	}{
		{"sum 99.5", []Share{{"R-32", 50}, {"R-125", 49.5}}, 1, ErrInvalidInput, "", "composition sums to 99.5 %, must be 100 % ± 0.01"},
		{"sum 100.02", []Share{{"R-32", 50}, {"R-125", 50.02}}, 1, ErrInvalidInput, "", "composition sums to 100.02 %"},
		{"ambiguous formula", []Share{{"C2H2F4", 50}, {"R-32", 50}}, 1, ErrAmbiguousIdentifier, "shares[0].identifier", "HFC-134"},
		{"unknown identifier", []Share{{"R-32", 50}, {"R-12S", 50}}, 1, ErrUnknownIdentifier, "shares[1].identifier", "did you mean"},
		{"wrong CAS", []Share{{"75-10-6", 50}, {"R-125", 50}}, 1, ErrUnknownIdentifier, "shares[0].identifier", "check digit"},
		{"a blend as component", []Share{{"R-410A", 50}, {"R-125", 50}}, 1, ErrInvalidInput, "shares[0].identifier", "blend"},
		{"listed twice", []Share{{"R-32", 50}, {"HFC-32", 50}}, 1, ErrInvalidInput, "shares[1].identifier", "already given"},
		{"zero share", []Share{{"R-32", 0}, {"R-125", 100}}, 1, ErrInvalidInput, "shares[0].mass_pct", "above 0"},
		{"NaN share", []Share{{"R-32", math.NaN()}}, 1, ErrInvalidInput, "shares[0].mass_pct", "above 0"},
		{"no shares", nil, 1, ErrInvalidInput, "shares", "no components"},
		{"negative mass", []Share{{"R-32", 100}}, -5, ErrInvalidInput, "net_mass_kg", ">= 0"},
		{"infinite mass", []Share{{"R-32", 100}}, math.Inf(1), ErrInvalidInput, "net_mass_kg", ">= 0"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := c.EvaluateShares(tc.shares, tc.kg)
			if !errors.Is(err, tc.is) {
				t.Fatalf("error %v, want one wrapping %v", err, tc.is)
			}
			if !strings.Contains(err.Error(), tc.msg) {
				t.Errorf("error %q does not say %q", err, tc.msg)
			}
			var ie *InputError
			var de *IdentifierError
			switch {
			case errors.As(err, &ie):
				if ie.Field != tc.field {
					t.Errorf("field %q, want %q", ie.Field, tc.field)
				}
			case errors.As(err, &de):
				if de.Field != tc.field {
					t.Errorf("field %q, want %q", de.Field, tc.field)
				}
			}
		})
	}
}

func TestEvaluateIntoReuses(t *testing.T) {
	c := testCatalogue(t)
	var ev Evaluation
	if err := c.EvaluateInto(&ev, "R-404A", 1000); err != nil {
		t.Fatal(err)
	}
	first := &ev.Components[0]
	if err := c.EvaluateInto(&ev, "R-507A", 1000); err != nil {
		t.Fatal(err)
	}
	// source: R-507A = HFC-125/HFC-143a 50/50 (ASHRAE 34); 0.5 t × 3500 + 0.5 t × 4470 (Annex F)
	if &ev.Components[0] != first || len(ev.Components) != 2 || !near(ev.CO2eTonnes, 3985) || ev.Designation != "R-507A" {
		t.Errorf("reused %v, %d components, %g t for %s; want the same backing array, 2, 3985 t, R-507A",
			&ev.Components[0] == first, len(ev.Components), ev.CO2eTonnes, ev.Designation)
	}
	if n := testing.AllocsPerRun(100, func() { _ = c.EvaluateInto(&ev, "R-404A", 12) }); n != 0 {
		t.Errorf("EvaluateInto allocates %v times per call, want 0", n)
	}
	if err := c.EvaluateInto(&ev, "HCFC-22", 1000); err != nil || len(ev.Components) != 1 || !near(ev.ODPTonnes, 0.055) {
		t.Errorf("substance after blend: %v, %d components, %g ODP t", err, len(ev.Components), ev.ODPTonnes)
	}
}

func TestEvaluateErrors(t *testing.T) {
	c := testCatalogue(t)
	if _, err := c.Evaluate("R-4O4A", 1); !errors.Is(err, ErrUnknownIdentifier) || !strings.Contains(err.Error(), "R-404A") {
		t.Errorf("unknown designation: %v, want ErrUnknownIdentifier suggesting R-404A", err)
	}
	if _, err := c.Evaluate("2903.45", 1); !errors.Is(err, ErrAmbiguousIdentifier) {
		t.Errorf("HS code: %v, want ErrAmbiguousIdentifier", err)
	}
	if _, err := c.Evaluate("2903.79", 1); err == nil || !strings.Contains(err.Error(), "more") || len(err.Error()) > 300 {
		t.Errorf("HS code with many candidates: %v, want a short message naming a few", err)
	}
	if _, err := c.Evaluate("R-22", math.NaN()); !errors.Is(err, ErrInvalidInput) {
		t.Errorf("NaN mass: %v, want ErrInvalidInput", err)
	}
}

func TestCautions(t *testing.T) {
	c := testCatalogue(t)
	tests := []struct {
		name    string
		want    []string // parts of cautions that must appear
		notWant []string
	}{
		// source: ASHRAE 34 classes (from memory) R-22 A1, R-32 A2L, R-152a A2, R-290 A3,
		// R-717 B2L, R-123 B1; cautions (asphyxiation, frostbite, toxic decomposition): common practice
		{"R-22", []string{"Asphyxiation", "Frostbite", "Toxic decomposition", "decision support"}, []string{"flammab", "toxicity"}},
		{"R-32", []string{"Lower flammability (ASHRAE 34 class A2L)"}, []string{"Highly"}},
		{"R-152a", []string{"Flammable (ASHRAE 34 class A2)"}, nil},
		{"R-290", []string{"Highly flammable (ASHRAE 34 class A3)", "Asphyxiation"}, []string{"Toxic decomposition"}},
		{"R-717", []string{"Higher toxicity (ASHRAE 34 class B2L)", "Lower flammability (ASHRAE 34 class B2L)"}, nil},
		{"R-123", []string{"Higher toxicity (ASHRAE 34 class B1)"}, []string{"flammab"}},
		{"R-454B", []string{"class A2L"}, nil},
		{"HCFC-225", []string{"No ASHRAE 34 safety class is recorded"}, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			all := strings.Join(mustEvaluate(t, c, tc.name, 1).Cautions, "\n")
			for _, w := range tc.want {
				if !strings.Contains(all, w) {
					t.Errorf("cautions lack %q:\n%s", w, all)
				}
			}
			for _, w := range tc.notWant {
				if strings.Contains(strings.ToLower(all), strings.ToLower(w)) {
					t.Errorf("cautions should not mention %q:\n%s", w, all)
				}
			}
		})
	}
}

func TestCompositionErrorMessage(t *testing.T) {
	// The wording the brief asks for.
	if got := (&CompositionError{Sum: 99.5}).Error(); got != "composition sums to 99.5 %, must be 100 % ± 0.01" {
		t.Errorf("message %q", got)
	}
}
