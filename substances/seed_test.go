package substances

import (
	"errors"
	"io/fs"
	"math"
	"strings"
	"testing"
	"testing/fstest"
)

func TestSeedCountsPerGroup(t *testing.T) {
	subs, blends, err := Seed()
	if err != nil {
		t.Fatalf("Seed: %v", err)
	}
	// source: Montreal Protocol Annexes A-F (Ozone Secretariat Handbook 2019); C/I counts the
	// 40 Annex entries plus HCFC-133a, an isomer controlled through the HCFC-133 group (seeded on purpose).
	want := map[Group]int{
		GroupAI: 5, GroupAII: 3, GroupBI: 10, GroupBII: 1, GroupBIII: 1,
		GroupCI: 41, GroupCII: 34, GroupCIII: 1, GroupEI: 1, GroupFI: 17, GroupFII: 1,
		GroupNone: 20, // blend components: PFCs, HFOs, hydrocarbons, CO2, ammonia, dimethyl ether, HFC-161, and chloropicrin (fumigant component)
	}
	got := map[Group]int{}
	for _, s := range subs {
		got[s.Group]++
	}
	for g, n := range want {
		if got[g] != n {
			t.Errorf("group %q: %d substances, want %d", g, got[g], n)
		}
	}
	if len(subs) != 135 {
		t.Errorf("%d substances, want 135", len(subs))
	}
	// 108 ASHRAE 34 blends plus the three methyl bromide/chloropicrin fumigant mixtures
	// (98/2, 67/33, 50/50; common practice).
	if len(blends) != 111 {
		t.Errorf("%d blends, want 111", len(blends))
	}
}

func TestSeedValues(t *testing.T) {
	subs, blends, err := Seed()
	if err != nil {
		t.Fatalf("Seed: %v", err)
	}
	by := map[string]Substance{}
	for _, s := range subs {
		by[s.Designation] = s
	}
	tests := []struct {
		name  string
		check func(t *testing.T)
	}{
		{"molar mass from the formula", func(t *testing.T) {
			// source: IUPAC abridged standard atomic weights, summed by hand:
			// CHClF2 = 12.011 + 1.008 + 35.45 + 2×18.998; C2H2F4 = 2×12.011 + 2×1.008 + 4×18.998.
			for d, want := range map[string]float64{"HCFC-22": 86.465, "HFC-134a": 102.030, "methyl bromide": 94.939} {
				if got := by[d].MolarMass; math.Abs(got-want) > 1e-9 {
					t.Errorf("%s molar mass %.6f, want %.3f", d, got, want)
				}
			}
		}},
		{"isomer-group ranges use the upper value", func(t *testing.T) {
			n := 0
			for _, s := range subs {
				if s.ODPHigh == 0 {
					continue
				}
				n++
				// source: Annex C footnote, the highest value of a range is used
				if s.ODP != s.ODPHigh || s.ODPLow > s.ODPHigh {
					t.Errorf("%s: ODP %g, range %g-%g", s.Designation, s.ODP, s.ODPLow, s.ODPHigh)
				}
				if s.IsomerCount > 1 && s.Structure == "" && s.CAS != "" {
					t.Errorf("%s: isomer group carries CAS %s", s.Designation, s.CAS)
				}
			}
			// source: MP Handbook 2019 (testdata/reference/montreal_protocol_annexes.csv): 31 HCFC ranges (C/I, incl. the 123/124
			// group rows) + HCFC-133a (group range) + 31 HBFC ranges (C/II)
			if n != 63 {
				t.Errorf("%d entries with an ODP range, want 63", n)
			}
		}},
		{"HBFC designations follow EU 1005/2009 Annex I names", func(t *testing.T) {
			// source: Regulation (EC) 1005/2009 Annex I (German text, stored copy at freirecht.de):
			// HFBKW-21 B2 CHFBr2, HFBKW-121 B4 C2HFBr4, HFBKW-226 B1 C3HF6Br.
			for d, f := range map[string]string{"HBFC-21B2": "CHBr2F", "HBFC-121B4": "C2HBr4F", "HBFC-226B1": "C3HBrF6", "HBFC-271B1": "C3H6BrF"} {
				if by[d].Formula != f || by[d].Group != GroupCII {
					t.Errorf("%s: formula %q group %q, want %s in C/II", d, by[d].Formula, by[d].Group, f)
				}
			}
		}},
		{"isomer-group designations follow from the formula", func(t *testing.T) {
			n := 0
			for _, s := range subs {
				if (s.Group != GroupCI && s.Group != GroupCII) || s.IsomerCount < 2 || s.Structure != "" {
					continue
				}
				f, _ := ParseFormula(s.Formula)
				num, err := NumberForFormula(f) // ASHRAE 34 / ISO 817 numbering rule
				prefix := map[Group]string{GroupCI: "HCFC-", GroupCII: "HBFC-"}[s.Group]
				d := strings.TrimSuffix(s.Designation, " (isomer group)")
				if err != nil || d != prefix+num {
					t.Errorf("%s (%s): the numbering rule gives %s%s (%v)", s.Designation, s.Formula, prefix, num, err)
				}
				n++
			}
			// source: MP Handbook 2019: 31 HCFC and 31 HBFC formula entries with more than one isomer
			if n != 62 {
				t.Errorf("%d isomer-group entries, want 62", n)
			}
		}},
		{"C3H2F5Br upper value 14", func(t *testing.T) {
			// source: EU 1005/2009 Annex I (from memory); the Handbook
			// extraction reads 0.9-1.4 (see the note in annex.csv)
			s := by["HBFC-235B1"]
			if s.ODP != 14 || s.ODPLow != 0.9 || !strings.Contains(s.Sources, "0.9-1.4") {
				t.Errorf("HBFC-235B1: ODP %g range %g-%g, sources %q", s.ODP, s.ODPLow, s.ODPHigh, s.Sources)
			}
		}},
		{"Kigali GWPs only where the Annexes list them", func(t *testing.T) {
			n := 0
			for _, s := range subs {
				if _, ok := s.GWP[SetProtocol]; ok {
					n++
				}
			}
			// source: Kigali Amendment GWP columns of Annexes A Group I, C Group I and F: 5 CFCs +
			// 8 HCFCs (+ the two Annex C group rows that carry the 123/124 values) + 18 Annex F
			if n != 33 {
				t.Errorf("%d substances with an Annex GWP, want 33", n)
			}
		}},
		{"HS subheadings of headings 29.03, 38.24 and 38.27", func(t *testing.T) {
			// source: WCO HS 2022 nomenclature and the superseded HS 2017 codes
			for d, want := range map[string][2]string{
				"HCFC-22": {"2903.71", "2903.71"}, "HFC-134a": {"2903.45", "2903.39"}, "CFC-12": {"2903.77", "2903.77"},
				"methyl bromide": {"2903.61", "2903.39"}, "carbon tetrachloride": {"2903.14", "2903.14"},
				"methyl chloroform": {"2903.19", "2903.19"}, "HFC-23": {"2903.41", "2903.39"}, "halon-1301": {"2903.76", "2903.76"},
				"HCFC-141b": {"2903.73", "2903.73"}, "HCFC-124": {"2903.79", "2903.79"}, "HBFC-22B1": {"2903.79", "2903.79"},
				"PFC-116": {"2903.49", "2903.39"}, "HFO-1234yf": {"2903.51", "2903.39"},
			} {
				s := by[d]
				if len(s.HS2022) != 1 || s.HS2022[0] != want[0] || len(s.HS2017) != 1 || s.HS2017[0] != want[1] {
					t.Errorf("%s: HS2022 %v HS2017 %v, want %s / %s", d, s.HS2022, s.HS2017, want[0], want[1])
				}
			}
		}},
		{"every value names a source", func(t *testing.T) {
			for _, s := range subs {
				if !strings.Contains(s.Sources, "ODP:") && !strings.Contains(s.Sources, "ODP,") {
					t.Errorf("%s: sources %q name no ODP source", s.Designation, s.Sources)
				}
			}
			for _, b := range blends {
				if !strings.Contains(b.Sources, "composition") {
					t.Errorf("%s: sources %q name no composition source", b.Designation, b.Sources)
				}
			}
		}},
		{"blend components exist and sum to 100", func(t *testing.T) {
			for _, b := range blends {
				sum := 0.0
				for _, c := range b.Components {
					if _, ok := by[c.Designation]; !ok {
						t.Errorf("%s: component %s not seeded", b.Designation, c.Designation)
					}
					sum += c.MassPct
				}
				if math.Abs(sum-100) > 0.01 {
					t.Errorf("%s sums to %g", b.Designation, sum)
				}
			}
		}},
	}
	for _, tc := range tests {
		t.Run(tc.name, tc.check)
	}
}

// seedFSWith copies the embedded seed files and replaces old with new in one of them; it
// returns the copy and the 1-based line of the replacement.
func seedFSWith(t *testing.T, file, old, repl string) (fs.FS, int) {
	t.Helper()
	m := fstest.MapFS{}
	for _, f := range []string{seedAnnexFile, seedComponentsFile, seedBlendsFile, seedSourcesFile} {
		b, err := seedFiles.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		m[f] = &fstest.MapFile{Data: b}
	}
	text := string(m[file].Data)
	i := strings.Index(text, old)
	if i < 0 {
		t.Fatalf("%s does not contain %q", file, old)
	}
	m[file].Data = []byte(text[:i] + repl + text[i+len(old):])
	return m, strings.Count(text[:i], "\n") + 1
}

func TestSeedRejectsBadRows(t *testing.T) {
	tests := []struct {
		name      string
		file      string
		old, repl string
		field     string
		wantIs    error  // optional wrapped error
		wantInMsg string // part of the message
	}{
		{"formula not in Hill order", seedAnnexFile, "chlorodifluoromethane,CHClF2,", "chlorodifluoromethane,CHF2Cl,", "formula", nil, `write "CHClF2"`},
		{"unparsable formula", seedAnnexFile, "chlorodifluoromethane,CHClF2,", "chlorodifluoromethane,CHXlF2,", "formula", ErrFormula, "CHXlF2"},
		{"structure with other atoms", seedAnnexFile, ",CHClF2,CHClF2,CHF2Cl,", ",CHClF2,CHCl2F,CHF2Cl,", "structure", nil, "CHCl2F"},
		{"CAS check digit", seedAnnexFile, "75-45-6", "75-45-7", "cas", nil, "check digit"},
		{"synonym decodes to another formula", seedAnnexFile, "R-22;monochloro", "R-23;monochloro", "synonyms", nil, "decodes to CHF3"},
		{"ODP not the upper end of the range", seedAnnexFile, "C/I,0.04,0.01,0.04,", "C/I,0.03,0.01,0.04,", "odp", nil, "upper end"},
		{"unknown source code", seedAnnexFile, "4660,IPCC-AR5", "4660,IPCC-AR9", "gwp_ar5_src", nil, "unknown source code"},
		{"value without source", seedAnnexFile, "4660,IPCC-AR5", "4660,", "gwp_ar5_src", nil, "names no source"},
		{"unknown HS subheading", seedAnnexFile, "52,WMO2018,2903.77,2903.77", "52,WMO2018,2903.77,2903.98", "hs2022", nil, "2903.98"},
		{"Annex GWP where the Annex lists none", seedAnnexFile, "1,DERIVED-ISOMERS,,,1890,IPCC-AR4", "1,DERIVED-ISOMERS,1890,MPHB13,1890,IPCC-AR4", "gwp_mp", nil, "lists GWPs only"},
		{"AR4 differs from the Annex value", seedAnnexFile, "4750,MPHB13,4750,IPCC-AR4", "4750,MPHB13,4751,IPCC-AR4", "gwp_ar4", nil, "differs"},
		{"uncontrolled file holds a controlled group", seedComponentsFile, "74-98-6,CAS-AR6,,0,", "74-98-6,CAS-AR6,F/I,0,", "group", nil, "belongs in"},
		{"blend component unknown", seedBlendsFile, "HCFC-22/HFC-152a/HCFC-124,53/13/34", "HCFC-22/HFC-152x/HCFC-124,53/13/34", "components", nil, "HFC-152x"},
		{"blend does not sum to 100", seedBlendsFile, "HCFC-22/HFC-152a/HCFC-124,53/13/34", "HCFC-22/HFC-152a/HCFC-124,53/13/33.5", "mass_pct", nil, "composition sums to 99.5 %, must be 100 % ± 0.01"},
		{"blend type against ASHRAE numbering", seedBlendsFile, "R-401A,,zeotrope", "R-401A,,azeotrope", "type", nil, "400 series"},
		{"tolerance count", seedBlendsFile, "53/13/34,2/0.5/1,", "53/13/34,2/0.5,", "tol_plus", nil, "2 values for 3 components"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			fsys, line := seedFSWith(t, tc.file, tc.old, tc.repl)
			_, _, err := seedFrom(fsys)
			if err == nil {
				t.Fatal("seedFrom accepted the bad row")
			}
			var se *SeedError
			if !errors.As(err, &se) || !errors.Is(err, ErrSeed) {
				t.Fatalf("error %v (%T) is not a *SeedError wrapping ErrSeed", err, err)
			}
			if se.File != tc.file || se.Line != line || se.Field != tc.field {
				t.Errorf("error names %s line %d field %s, want %s line %d field %s (%v)", se.File, se.Line, se.Field, tc.file, line, tc.field, err)
			}
			if tc.wantIs != nil && !errors.Is(err, tc.wantIs) {
				t.Errorf("error %v does not wrap %v", err, tc.wantIs)
			}
			if !strings.Contains(err.Error(), tc.wantInMsg) {
				t.Errorf("error %q does not mention %q", err, tc.wantInMsg)
			}
		})
	}
}

func TestSeedCASErrorIsTyped(t *testing.T) {
	fsys, _ := seedFSWith(t, seedAnnexFile, "75-45-6", "75-45-7")
	_, _, err := seedFrom(fsys)
	var ce *CASCheckError
	if !errors.As(err, &ce) || ce.Want != 6 {
		t.Fatalf("error %v: want a *CASCheckError giving check digit 6 (75-45-6, HCFC-22)", err)
	}
}
