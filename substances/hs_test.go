package substances

import (
	"encoding/csv"
	"errors"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

func TestNormalizeHS(t *testing.T) {
	tests := []struct{ name, in, want string }{
		// common practice: HS codes are written with or without dots; 8- and 10-digit national lines
		{"six digits", "290371", "2903.71"},
		{"dotted", "2903.71", "2903.71"},
		{"national eight digits", "2903.71.00", "2903.71"},
		{"national ten digits", "2903.71.0010", "2903.71"},
		{"space", "2903 71", "2903.71"},
		{"surrounding space", " 3827.61 ", "3827.61"},
		{"chapter.heading.subheading", "29.03.71", "2903.71"},
		{"digits run on", "38276100", "3827.61"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := NormalizeHS(tc.in)
			if err != nil || got != tc.want {
				t.Errorf("NormalizeHS(%q) = %q, %v; want %q", tc.in, got, err, tc.want)
			}
		})
	}
	bad := []struct{ name, in, why string }{
		{"empty", "", "fewer than the 6"},
		{"heading only", "2903", "fewer than the 6"},
		{"five digits", "2903.7", "fewer than the 6"},
		{"letters", "2903.7a", "character"},
		{"HS prefix", "HS 290371", "character"},
		{"double dot", "2903..71", "separator"},
		{"dot after odd digit count", "290.371", "separator"},
		{"leading dot", ".290371", "separator"},
		{"hyphen", "2903-71", "character"},
		{"chapter 00", "000371", "chapter 00"},
		{"chapter 98", "980371", "chapter 98"},
		{"too long", "290371000000000", "more than 14"},
	}
	for _, tc := range bad {
		t.Run(tc.name, func(t *testing.T) {
			got, err := NormalizeHS(tc.in)
			if !errors.Is(err, ErrHSCode) {
				t.Fatalf("NormalizeHS(%q) = %q, %v; want an ErrHSCode error", tc.in, got, err)
			}
			if !strings.Contains(err.Error(), tc.why) {
				t.Errorf("message %q should say %q", err, tc.why)
			}
		})
	}
}

func TestLookupHS(t *testing.T) {
	tests := []struct {
		name    string
		edition HSEdition
		code    string
		found   bool
		text    string // expected part of the text
		shared  bool
		status  string
	}{
		// source: WCO Harmonized System 2022 and 2017 nomenclature, headings 29.03, 38.24 and
		// 38.27; status as the catalogue's HS table marks it
		{"HCFC-22 2022", HS2022, "290371", true, "HCFC-22", false, HSStatusVerified},
		{"CFC group 2022", HS2022, "2903.77", true, "perhalogenated only with fluorine and chlorine", true, HSStatusVerified},
		{"other HCFCs 2022", HS2022, "2903.79.00", true, "HBFCs", true, HSStatusVerified},
		{"methyl chloroform residual", HS2022, "2903.19", true, "1,1,1-trichloroethane", true, HSStatusVerified},
		{"no Annex F HFC in 2903.49", HS2022, "2903.49", true, "PFCs", true, HSStatusVerified},
		{"3827.61", HS2022, "3827.61", true, "15 %", false, HSStatusVerified},
		{"3827.31 partly", HS2022, "3827.31", true, "2903.41 to 2903.48", false, HSStatusPartly},
		{"3827.40 partly", HS2022, "3827.40", true, "bromochloromethane", false, HSStatusPartly},
		{"3827.64 partly", HS2022, "3827.64", true, "HFC-134a", false, HSStatusPartly},
		{"HFCs 2017", HS2017, "2903.39", true, "Fluorinated, brominated or iodinated", true, HSStatusVerified},
		{"mixtures 2017", HS2017, "382474", true, "HCFCs", false, HSStatusVerified},
		{"2017 carbon tetrachloride carried from memory", HS2017, "2903.14", true, "Carbon tetrachloride", false, HSStatusUnverified},
		{"HFC code did not exist in 2017", HS2017, "2903.45", false, "", false, ""},
		{"38.27 did not exist in 2017", HS2017, "3827.61", false, "", false, ""},
		{"3824.7x gone in 2022", HS2022, "3824.71", false, "", false, ""},
		{"unrelated code", HS2022, "0101.21", false, "", false, ""},
		{"malformed code", HS2022, "29037", false, "", false, ""},
		{"unknown edition", HSEdition("HS2012"), "2903.71", false, "", false, ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s, ok := LookupHS(tc.edition, tc.code)
			if ok != tc.found {
				t.Fatalf("LookupHS(%s, %q) found = %v, want %v", tc.edition, tc.code, ok, tc.found)
			}
			if !ok {
				return
			}
			if s.Edition != tc.edition || !strings.Contains(s.Text, tc.text) || s.Shared != tc.shared || s.Status != tc.status {
				t.Errorf("LookupHS(%s, %q) = %+v; want text with %q, shared %v, status %q", tc.edition, tc.code, s, tc.text, tc.shared, tc.status)
			}
		})
	}
}

// TestHS2022AnnexFSubheadings checks that each of the 18 Annex F substances is named in its
// HS 2022 subheading (source: WCO HS 2022 nomenclature, subheadings 2903.41-2903.48).
func TestHS2022AnnexFSubheadings(t *testing.T) {
	want := map[string]string{
		"HFC-23": "2903.41", "HFC-32": "2903.42", "HFC-41": "2903.43", "HFC-152": "2903.43",
		"HFC-152a": "2903.43", "HFC-125": "2903.44", "HFC-143a": "2903.44", "HFC-143": "2903.44",
		"HFC-134a": "2903.45", "HFC-134": "2903.45", "HFC-227ea": "2903.46", "HFC-236cb": "2903.46",
		"HFC-236ea": "2903.46", "HFC-236fa": "2903.46", "HFC-245fa": "2903.47", "HFC-245ca": "2903.47",
		"HFC-365mfc": "2903.48", "HFC-43-10mee": "2903.48",
	}
	if len(want) != 18 {
		t.Fatalf("test table has %d entries, want the 18 Annex F substances", len(want))
	}
	for name, code := range want {
		s, ok := LookupHS(HS2022, code)
		if !ok {
			t.Errorf("%s: subheading %s missing", name, code)
			continue
		}
		if !regexp.MustCompile(`\(` + regexp.QuoteMeta(name) + `\)`).MatchString(s.Text) {
			t.Errorf("%s: subheading %s text %q does not name it", name, code, s.Text)
		}
		if s.Shared {
			t.Errorf("%s: subheading %s holds only Annex F substances, Shared should be false", name, code)
		}
	}
}

func TestHSTableConsistent(t *testing.T) {
	if got := HSEditions(); len(got) != 2 || got[0] != HS2017 || got[1] != HS2022 {
		t.Fatalf("HSEditions() = %v, want [HS2017 HS2022]", got)
	}
	seen := map[string]bool{}
	for _, s := range hsTable {
		key := string(s.Edition) + " " + s.Code
		if seen[key] {
			t.Errorf("%s listed twice", key)
		}
		seen[key] = true
		if n, err := NormalizeHS(s.Code); err != nil || n != s.Code {
			t.Errorf("%s: code not in normal form (%q, %v)", key, n, err)
		}
		switch s.Status {
		case HSStatusVerified, HSStatusPartly, HSStatusUnverified:
		default:
			t.Errorf("%s: status %q", key, s.Status)
		}
		if s.Text == "" {
			t.Errorf("%s: empty text", key)
		}
	}
	// source: the HS 2022 subheadings whose full text was confirmed only in part (thresholds,
	// ranges or last clauses of 3827.31-3827.68 not read in the WCO text)
	for _, code := range []string{"3827.31", "3827.40", "3827.62", "3827.63", "3827.64", "3827.65", "3827.68"} {
		if s, _ := LookupHS(HS2022, code); s.Status != HSStatusPartly {
			t.Errorf("%s status %q, want partly verified: part of its WCO text is unconfirmed", code, s.Status)
		}
	}
	// source: WCO HS 2022 texts of these "other" subheadings, which hold controlled and uncontrolled goods alike
	for _, code := range []string{"2903.19", "2903.49", "2903.77", "2903.79", "3827.39", "3827.69", "3827.90"} {
		if s, _ := LookupHS(HS2022, code); !s.Shared {
			t.Errorf("%s should be Shared: its WCO HS 2022 text covers uncontrolled goods too", code)
		}
	}
}

func TestMixtureHS(t *testing.T) {
	tests := []struct {
		name     string
		shares   []HSShare
		hs2022   string
		note2022 string // expected part of the HS 2022 note
		hs2017   string
		note2017 string
	}{
		{
			// composition: blend_components.csv R-404A 44/52/4; 3827.61 (WCO HS 2022 text)
			name:   "R-404A, 52 % HFC-143a",
			shares: []HSShare{{"HFC-125", GroupFI, 44}, {"HFC-143a", GroupFI, 52}, {"HFC-134a", GroupFI, 4}},
			hs2022: "3827.61", note2022: "52 % by mass of HFC-143a",
			hs2017: "3824.78", note2017: "PFCs or HFCs",
		},
		{
			// composition: blend_components.csv R-507A 50/50
			name:   "R-507A, exactly 50 % HFC-143a",
			shares: []HSShare{{"R-125", GroupFI, 50}, {"R-143a", GroupFI, 50}},
			hs2022: "3827.61", note2022: "HFC-143a",
			hs2017: "3824.78",
		},
		{
			// 15 % threshold of 3827.61 (WCO HS 2022 text), invented composition
			name:   "15 % HFC-143a is enough",
			shares: []HSShare{{"HFC-143a", GroupFI, 15}, {"HFC-134a", GroupFI, 85}},
			hs2022: "3827.61",
			hs2017: "3824.78",
		},
		{
			name:   "14.9 % HFC-143a is not",
			shares: []HSShare{{"HFC-143a", GroupFI, 14.9}, {"HFC-134a", GroupFI, 85.1}},
			hs2022: "", note2022: "only partly verified",
			hs2017: "3824.78",
		},
		{
			// composition: blend_components.csv R-500 73.8/26.2; 3827.11 [V]
			name:   "R-500 with CFC-12",
			shares: []HSShare{{"CFC-12", GroupAI, 73.8}, {"HFC-152a", GroupFI, 26.2}},
			hs2022: "3827.11", note2022: "CFC-12",
			hs2017: "3824.71", note2017: "CFC-12",
		},
		{
			// composition: blend_components.csv R-502 48.8/51.2: CFCs come before HCFCs
			name:   "R-502, CFC-115 with HCFC-22",
			shares: []HSShare{{"HCFC-22", GroupCI, 48.8}, {"CFC-115", GroupAI, 51.2}},
			hs2022: "3827.11",
			hs2017: "3824.71",
		},
		{
			// composition: blend_components.csv R-410A 50/50; 3827.62-.65 thresholds [U]
			name:   "R-410A, HFC-32/125",
			shares: []HSShare{{"HFC-32", GroupFI, 50}, {"HFC-125", GroupFI, 50}},
			hs2022: "", note2022: "not decided",
			hs2017: "3824.78",
		},
		{
			// composition: blend_components.csv R-407C 23/25/52
			name:   "R-407C",
			shares: []HSShare{{"HFC-32", GroupFI, 23}, {"HFC-125", GroupFI, 25}, {"HFC-134a", GroupFI, 52}},
			hs2022: "", note2022: "3827.62-3827.69",
			hs2017: "3824.78",
		},
		{
			// composition: blend_components.csv R-513A 56/44
			name:   "R-513A, HFO with HFC-134a",
			shares: []HSShare{{"HFO-1234yf", GroupNone, 56}, {"HFC-134a", GroupFI, 44}},
			hs2022: "", note2022: "only partly verified",
			hs2017: "3824.78",
		},
		{
			// composition: blend_components.csv R-409A 60/25/15: HCFCs of 2903.71 and 2903.74
			name:   "R-409A, HCFCs only",
			shares: []HSShare{{"HCFC-22", GroupCI, 60}, {"HCFC-124", GroupCI, 25}, {"HCFC-142b", GroupCI, 15}},
			hs2022: "3827.32", note2022: "2903.71-2903.75",
			hs2017: "3824.74",
		},
		{
			// HCFC-124 is in 2903.79, not 2903.71-.75 (WCO HS 2022 texts of 2903.71-2903.79); invented composition
			name:   "HCFC-124 with propane",
			shares: []HSShare{{"HCFC-124", GroupCI, 90}, {"R-290", GroupNone, 10}},
			hs2022: "3827.39", note2022: "outside subheadings 2903.71-2903.75",
			hs2017: "3824.74",
		},
		{
			// composition: blend_components.csv R-408A 7/46/47; 3827.31 wording [P]
			name:   "R-408A, HCFC-22 with HFCs",
			shares: []HSShare{{"HFC-125", GroupFI, 7}, {"HFC-143a", GroupFI, 46}, {"HCFC-22", GroupCI, 47}},
			hs2022: "", note2022: "3827.31",
			hs2017: "3824.74",
		},
		{
			// composition: blend_components.csv R-508A 39/61
			name:   "R-508A, HFC-23 with PFC-116",
			shares: []HSShare{{"HFC-23", GroupFII, 39}, {"PFC-116", GroupNone, 61}},
			hs2022: "3827.51", note2022: "HFC-23",
			hs2017: "3824.78",
		},
		{
			// PFC before the other-HFC group (WCO HS 2022 order of 3827.51-3827.69); invented composition
			name:   "PFC-218 with HFC-143a",
			shares: []HSShare{{"PFC-218", GroupNone, 50}, {"HFC-143a", GroupFI, 50}},
			hs2022: "3827.59", note2022: "PFC-218",
			hs2017: "3824.78",
		},
		{
			name:   "halons",
			shares: []HSShare{{"halon-1211", GroupAII, 60}, {"halon-1301", GroupAII, 40}},
			hs2022: "3827.20", note2022: "halon-1211, halon-1301",
			hs2017: "3824.72",
		},
		{
			name:   "HBFC before halon in 2022, after it in 2017",
			shares: []HSShare{{"HBFC-22B1", GroupCII, 50}, {"halon-1301", GroupAII, 50}},
			hs2022: "3827.12", note2022: "HBFC-22B1",
			hs2017: "3824.72",
		},
		{
			// names of the catalogue, classified by their group
			name:   "carbon tetrachloride by name",
			shares: []HSShare{{"carbon tetrachloride", GroupBII, 30}, {"R-30", GroupNone, 70}},
			hs2022: "3827.13",
			hs2017: "3824.75",
		},
		{
			name:   "methyl chloroform by name",
			shares: []HSShare{{"methyl chloroform", GroupBIII, 95}, {"R-30", GroupNone, 5}},
			hs2022: "3827.14",
			hs2017: "3824.76",
		},
		{
			// 3827.40 wording [P]
			name:   "methyl bromide with CO2",
			shares: []HSShare{{"methyl bromide", GroupEI, 98}, {"R-744", GroupNone, 2}},
			hs2022: "", note2022: "3827.40",
			hs2017: "3824.77",
		},
		{
			name:   "dichloromethane with propane: other",
			shares: []HSShare{{"R-30", GroupNone, 40}, {"R-290", GroupNone, 60}},
			hs2022: "3827.90",
			hs2017: "3824.79",
		},
		{
			name:   "hydrocarbons only: not in the heading",
			shares: []HSShare{{"R-290", GroupNone, 60}, {"R-600a", GroupNone, 40}},
			hs2022: "", note2022: "do not apply",
			hs2017: "", note2017: "do not apply",
		},
		{
			// composition: blend_components.csv R-435A (R-E170/R-152a 80/20)
			name:   "dimethyl ether with HFC-152a",
			shares: []HSShare{{"R-E170", GroupNone, 80}, {"HFC-152a", GroupFI, 20}},
			hs2022: "", note2022: "only partly verified",
			hs2017: "3824.78",
		},
		{
			name:   "unidentified component blocks a later subheading",
			shares: []HSShare{{"mystery gas", GroupNone, 50}, {"HFC-143a", GroupFI, 50}},
			hs2022: "", note2022: "mystery gas",
			hs2017: "", note2017: "mystery gas",
		},
		{
			name:   "unidentified component cannot outrank CFCs",
			shares: []HSShare{{"mystery gas", GroupNone, 50}, {"CFC-11", GroupAI, 50}},
			hs2022: "3827.11",
			hs2017: "3824.71",
		},
		{
			name:   "shares below 100 % leave an unidentified remainder",
			shares: []HSShare{{"HFC-143a", GroupFI, 50}},
			hs2022: "", note2022: "remainder",
			hs2017: "", note2017: "remainder",
		},
		{
			name:   "structure written in place of a designation",
			shares: []HSShare{{"CH3CF3", GroupNone, 50}, {"HFC-125", GroupFI, 50}},
			hs2022: "3827.61",
			hs2017: "3824.78",
		},
		{
			name:   "bare formula cannot tell HFC-143 from HFC-143a",
			shares: []HSShare{{"C2H3F3", GroupNone, 50}, {"HFC-125", GroupFI, 50}},
			hs2022: "", note2022: "formula only",
			hs2017: "3824.78",
		},
		{
			name:   "HFO alone: not a derivative of methane, ethane or propane",
			shares: []HSShare{{"HFO-1234yf", GroupNone, 50}, {"HFO-1234ze(E)", GroupNone, 50}},
			hs2022: "", note2022: "do not apply",
			hs2017: "", note2017: "do not apply",
		},
		{name: "no components", shares: nil, hs2022: "", note2022: "no components", hs2017: "", note2017: "no components"},
		{
			name:   "negative share",
			shares: []HSShare{{"HFC-134a", GroupFI, -5}, {"HFC-125", GroupFI, 105}},
			hs2022: "", note2022: "0-100 %",
			hs2017: "", note2017: "0-100 %",
		},
		{
			name:   "shares above 100 %",
			shares: []HSShare{{"HFC-134a", GroupFI, 60}, {"HFC-125", GroupFI, 60}},
			hs2022: "", note2022: "more than 100 %",
			hs2017: "", note2017: "more than 100 %",
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			code, note := MixtureHS2022(tc.shares)
			if code != tc.hs2022 || !strings.Contains(note, tc.note2022) {
				t.Errorf("MixtureHS2022 = %q, %q; want %q with a note containing %q", code, note, tc.hs2022, tc.note2022)
			}
			if note == "" {
				t.Error("MixtureHS2022 gave no note")
			}
			code, note = MixtureHS2017(tc.shares)
			if code != tc.hs2017 || !strings.Contains(note, tc.note2017) {
				t.Errorf("MixtureHS2017 = %q, %q; want %q with a note containing %q", code, note, tc.hs2017, tc.note2017)
			}
		})
	}
}

// TestMixtureHSReferenceBlends classifies every blend of the reference table and checks what
// must hold whatever the composition: a decided code is a verified subheading of its edition,
// a blend with a CFC goes to 3827.11 / 3824.71, one with an HCFC and no CFC to 3824.74, and
// a partly verified subheading is never chosen (source: testdata/reference/blend_components.csv,
// halocarbons.csv for the groups, WCO HS 2022 heading 38.27 and HS 2017 heading 38.24).
func TestMixtureHSReferenceBlends(t *testing.T) {
	groups := map[string]Group{}
	for _, row := range codecReferenceRows(t) {
		groups[row["designation"]] = Group(row["mp_annex_group"])
	}
	fh, err := os.Open(filepath.Join(referenceDir(t), "blend_components.csv"))
	if err != nil {
		t.Fatalf("open blend_components.csv: %v", err)
	}
	defer fh.Close()
	recs, err := csv.NewReader(fh).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	blends := map[string][]HSShare{}
	var order []string
	for _, rec := range recs[1:] {
		pct, err := strconv.ParseFloat(rec[3], 64)
		if err != nil {
			t.Fatalf("%v: %v", rec, err)
		}
		if _, ok := blends[rec[0]]; !ok {
			order = append(order, rec[0])
		}
		blends[rec[0]] = append(blends[rec[0]], HSShare{rec[1], groups[rec[1]], pct})
	}
	decided := 0
	for _, name := range order {
		shares := blends[name]
		hasCFC, hasHCFC := false, false
		for _, s := range shares {
			hasCFC = hasCFC || s.Group == GroupAI || s.Group == GroupBI
			hasHCFC = hasHCFC || s.Group == GroupCI
		}
		for _, ed := range []struct {
			edition  HSEdition
			classify func([]HSShare) (string, string)
			cfc      string
		}{{HS2022, MixtureHS2022, "3827.11"}, {HS2017, MixtureHS2017, "3824.71"}} {
			code, note := ed.classify(shares)
			if strings.Contains(note, "unidentified") {
				t.Errorf("%s %s: a component was not identified: %s", name, ed.edition, note)
			}
			if code != "" {
				decided++
				s, ok := LookupHS(ed.edition, code)
				if !ok || s.Status != HSStatusVerified {
					t.Errorf("%s %s: code %s is not a verified subheading (%+v)", name, ed.edition, code, s)
				}
			}
			if hasCFC && code != ed.cfc {
				t.Errorf("%s %s: contains a CFC, got %q (%s)", name, ed.edition, code, note)
			}
			if ed.edition == HS2017 && hasHCFC && !hasCFC && code != "3824.74" {
				t.Errorf("%s HS 2017: HCFCs without CFCs, got %q (%s)", name, code, note)
			}
		}
	}
	if len(order) < 100 || decided < len(order) {
		t.Errorf("%d blends, %d decided codes; expected over 100 blends and every HS 2017 code decided", len(order), decided)
	}
}

func FuzzNormalizeHS(f *testing.F) {
	for _, s := range []string{"290371", "2903.71", "2903.71.00", "2903 71", "29.03.71", "2903.7", "", ".", "  ", "0003.71", "9999.99", "2903..71", "12345678901234"} {
		f.Add(s)
	}
	form := regexp.MustCompile(`^[0-9]{4}\.[0-9]{2}$`)
	f.Fuzz(func(t *testing.T, s string) {
		got, err := NormalizeHS(s)
		if err != nil {
			if !errors.Is(err, ErrHSCode) {
				t.Fatalf("NormalizeHS(%q): error %v does not wrap ErrHSCode", s, err)
			}
			return
		}
		if !form.MatchString(got) {
			t.Fatalf("NormalizeHS(%q) = %q, not NNNN.NN", s, got)
		}
		again, err := NormalizeHS(got)
		if err != nil || again != got {
			t.Fatalf("NormalizeHS(%q) = %q does not re-normalize to itself: %q, %v", s, got, again, err)
		}
		digits := strings.Map(func(r rune) rune {
			if r >= '0' && r <= '9' {
				return r
			}
			return -1
		}, s)
		if digits[:6] != strings.Replace(got, ".", "", 1) {
			t.Fatalf("NormalizeHS(%q) = %q does not keep the first six digits", s, got)
		}
		_, _ = LookupHS(HS2022, s) // must not panic
	})
}
