package substances

import (
	"math"
	"strings"
	"testing"
)

// hsUndecided lists the catalogue blends whose HS 2022 subheading the 38.27 texts leave open,
// with the reason. Every other blend must have a decided subheading.
var hsUndecided = map[string]string{
	// R-413A is PFC-218/HFC-134a/R-600a 9/88/3 (ASHRAE 34): it answers the texts of the
	// HFC-23/PFC group (3827.51-3827.59, "containing ... PFCs but not containing CFCs or
	// HCFCs") and of the other-HFC group (3827.61-3827.69, "containing other HFCs but not
	// containing CFCs or HCFCs"); neither excludes the other.
	"R-413A": "3827.51-3827.59",
}

// TestCatalogueBlendsHS2022 classifies every blend of the seed catalogue: each has a decided
// HS 2022 subheading of heading 38.27, or is listed in hsUndecided with the reason its note
// must give.
func TestCatalogueBlendsHS2022(t *testing.T) {
	c := testCatalogue(t)
	seen := map[string]bool{}
	for _, b := range c.Blends() {
		e, err := c.Evaluate(b.Designation, 100)
		if err != nil {
			t.Fatalf("%s: %v", b.Designation, err)
		}
		reason, undecided := hsUndecided[b.Designation]
		switch {
		case undecided:
			seen[b.Designation] = true
			if e.HS2022 != "" || !strings.Contains(e.HSNote, "not decided") || !strings.Contains(e.HSNote, reason) {
				t.Errorf("%s: HS 2022 %q, note %q; want undecided with a note naming %s", b.Designation, e.HS2022, e.HSNote, reason)
			}
		case e.HS2022 == "":
			t.Errorf("%s: no HS 2022 subheading decided (%s)", b.Designation, e.HSNote)
		default:
			s, ok := LookupHS(HS2022, e.HS2022)
			if !ok || !strings.HasPrefix(e.HS2022, "3827.") || s.Status != HSStatusVerified {
				t.Errorf("%s: HS 2022 %q is not a verified subheading of heading 38.27", b.Designation, e.HS2022)
			}
		}
	}
	for d := range hsUndecided {
		if !seen[d] {
			t.Errorf("hsUndecided lists %s, which is not a catalogue blend", d)
		}
	}
}

// TestCatalogueBlendsHS2022Worked checks classifications worked by hand from the nominal
// compositions (ASHRAE 34, as seeded) and the HS 2022 subheading texts of heading 38.27.
func TestCatalogueBlendsHS2022Worked(t *testing.T) {
	c := testCatalogue(t)
	for d, want := range map[string]string{
		"R-404A": "3827.61", // 52 % HFC-143a: 15 % or more
		"R-507A": "3827.61", // 50 % HFC-143a
		"R-422D": "3827.62", // 65.1 % HFC-125 (55 % or more), no HFOs
		"R-410A": "3827.63", // 50 % HFC-125: below 55, 40 % or more
		"R-407C": "3827.64", // 25 % HFC-125 below 40; 52 % HFC-134a (30 % or more), no HFOs
		"R-448A": "3827.65", // HFOs exclude .62 and .64; 26 % HFC-125 below 40; 26 % HFC-32 and 26 % HFC-125
		"R-449A": "3827.65", // 24.3 % HFC-32, 24.7 % HFC-125, HFO-1234yf
		"R-454B": "3827.68", // HFC-32 68.9 % with HFO-1234yf, no HFC-125 or HFC-134a share that counts
		"R-513A": "3827.68", // HFO-1234yf 56 % excludes .64; HFC-134a is of 2903.45
		"R-402A": "3827.31", // HCFC-22 with HFC-125 (2903.44)
		"R-408A": "3827.31", // HCFC-22 with HFC-125 and HFC-143a
		"R-401A": "3827.31", // HCFC-22/HCFC-124 with HFC-152a (2903.43)
		"R-409A": "3827.32", // HCFCs only, HCFC-22 of 2903.71
		"R-509A": "3827.32", // HCFC-22 with PFC-218 (2903.49, not 2903.41-2903.48)
		"R-502":  "3827.11", // CFC-115 with HCFC-22: "whether or not containing HCFCs"
		"R-503":  "3827.11", // CFC-13 with HFC-23
		"R-508B": "3827.51", // HFC-23 with PFC-116
		// methyl bromide/chloropicrin fumigants: 3827.40 "containing methyl bromide"
		"methyl bromide/chloropicrin 98/2":  "3827.40",
		"methyl bromide/chloropicrin 67/33": "3827.40",
		"methyl bromide/chloropicrin 50/50": "3827.40",
	} {
		e, err := c.Evaluate(d, 100)
		if err != nil {
			t.Errorf("%s: %v", d, err)
			continue
		}
		if e.HS2022 != want {
			t.Errorf("%s: HS 2022 %q (%s), want %s", d, e.HS2022, e.HSNote, want)
		}
	}
}

// TestUncontrolledHSCodes checks the subheadings of the catalogue's uncontrolled substances
// (source: WCO HS 2022 subheadings as described by UN Comtrade H6; Chapter 27 Note 1(a) keeps
// pure propane in 27.11 and sends other chemically defined hydrocarbons to chapter 29).
func TestUncontrolledHSCodes(t *testing.T) {
	c := testCatalogue(t)
	for d, want := range map[string][]string{
		"R-290":          {"2711.12"},            // propane
		"R-600a":         {"2901.10", "2711.13"}, // isobutane: pure 2901.10, commercial butanes 2711.13
		"R-600":          {"2901.10", "2711.13"},
		"R-1270":         {"2901.22", "2711.14"}, // propene; commercial propylene 2711.14
		"R-744":          {"2811.21"},            // carbon dioxide
		"R-717":          {"2814.10"},            // anhydrous ammonia
		"R-E170":         {"2909.19"},            // acyclic ethers other than diethyl ether
		"HFO-1234yf":     {"2903.51"},            // named in 2903.51
		"HFO-1234ze(E)":  {"2903.51"},
		"HFO-1336mzz(Z)": {"2903.51"},
		"chloropicrin":   {"2904.91"}, // trichloronitromethane (chloropicrin)
	} {
		s, ok := c.Substance(d)
		if !ok {
			t.Errorf("%s not in the catalogue", d)
			continue
		}
		if strings.Join(s.HS2022, " ") != strings.Join(want, " ") {
			t.Errorf("%s: HS 2022 %v, want %v", d, s.HS2022, want)
		}
		if len(s.HS2017) == 0 {
			t.Errorf("%s: no HS 2017 subheading", d)
		}
	}
}

// TestChloropicrinMixtures checks the fumigant entries: chloropicrin is not controlled, and only
// the methyl bromide share counts (Annex E, ODP 0.6): 100 kg of the 98/2 mixture hold 98 kg of
// methyl bromide, 0.098 t × 0.6 = 0.0588 ODP t (arithmetic by hand).
func TestChloropicrinMixtures(t *testing.T) {
	c := testCatalogue(t)
	pic, ok := c.Substance("chloropicrin")
	// CAS 76-06-2, CCl3NO2 (from memory; the check digit is verified on load)
	if !ok || pic.CAS != "76-06-2" || pic.Formula != "CCl3NO2" || pic.Group != GroupNone || pic.ODP != 0 {
		t.Fatalf("chloropicrin: %+v", pic)
	}
	for _, tc := range []struct {
		name       string
		mebrKg     float64
		odpTonnes  float64
		resolvedAs string
	}{
		{"methyl bromide/chloropicrin 98/2", 98, 0.0588, "MBr/Pic 98/2"},
		{"methyl bromide/chloropicrin 67/33", 67, 0.0402, "MeBr/chloropicrin 67/33"},
		{"methyl bromide/chloropicrin 50/50", 50, 0.03, "MBr/Pic 50/50"},
	} {
		e, err := c.Evaluate(tc.name, 100)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		var mebr, picKg float64
		for _, comp := range e.Components {
			switch comp.Designation {
			case "methyl bromide":
				mebr = comp.MassKg
				if comp.Group != GroupEI {
					t.Errorf("%s: methyl bromide in group %s", tc.name, comp.Group)
				}
			case "chloropicrin":
				picKg = comp.MassKg
				if comp.ODPTonnes != 0 {
					t.Errorf("%s: chloropicrin counts %g ODP t", tc.name, comp.ODPTonnes)
				}
			}
		}
		if math.Abs(mebr-tc.mebrKg) > 1e-9 || math.Abs(picKg-(100-tc.mebrKg)) > 1e-9 {
			t.Errorf("%s: %g kg methyl bromide, %g kg chloropicrin in 100 kg", tc.name, mebr, picKg)
		}
		if math.Abs(e.ODPTonnes-tc.odpTonnes) > 1e-12 {
			t.Errorf("%s: %g ODP t, want %g", tc.name, e.ODPTonnes, tc.odpTonnes)
		}
		if !strings.Contains(strings.Join(e.Cautions, " "), "Toxic fumigant") {
			t.Errorf("%s: no fumigant caution in %v", tc.name, e.Cautions)
		}
		if cand, ok := c.Resolve(tc.resolvedAs).Unique(); !ok || cand.Designation != tc.name {
			t.Errorf("Resolve(%q) = %+v, want %s", tc.resolvedAs, c.Resolve(tc.resolvedAs), tc.name)
		}
	}
}
