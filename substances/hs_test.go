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
		// source: WCO HS 2022 nomenclature, headings 29.03 and 38.27 (UN Comtrade H6 descriptions;
		// 38.27 wording as reproduced at six digits in the UK, EU and US tariffs)
		{"HCFC-22 2022", HS2022, "290371", true, "HCFC-22", false, HSStatusVerified},
		{"CFC group 2022", HS2022, "2903.77", true, "perhalogenated only with fluorine and chlorine", true, HSStatusVerified},
		{"other HCFCs 2022", HS2022, "2903.79.00", true, "HBFCs", true, HSStatusVerified},
		{"methyl chloroform residual", HS2022, "2903.19", true, "1,1,1-trichloroethane", true, HSStatusVerified},
		{"no Annex F HFC in 2903.49", HS2022, "2903.49", true, "PFCs", true, HSStatusVerified},
		{"3827.61", HS2022, "3827.61", true, "15 %", false, HSStatusVerified},
		{"3827.31", HS2022, "3827.31", true, "2903.41 to 2903.48", false, HSStatusVerified},
		{"3827.40", HS2022, "3827.40", true, "bromochloromethane", false, HSStatusVerified},
		{"3827.62 threshold", HS2022, "3827.62", true, "55 % or more by mass of pentafluoroethane", false, HSStatusVerified},
		{"3827.64 threshold", HS2022, "3827.64", true, "30 % or more by mass of 1,1,1,2-tetrafluoroethane", false, HSStatusVerified},
		// HS 2022 2711.12 propane, 2711.13 butanes, 2811.21 carbon dioxide, 2814.10 anhydrous
		// ammonia, 2901.10 saturated acyclic hydrocarbons, 2904.91 chloropicrin (UN Comtrade H6)
		{"propane", HS2022, "2711.12", true, "propane", false, HSStatusVerified},
		{"butanes", HS2022, "2711.13", true, "butanes", true, HSStatusVerified},
		{"carbon dioxide", HS2022, "281121", true, "Carbon dioxide", false, HSStatusVerified},
		{"ammonia", HS2022, "2814.10", true, "Anhydrous ammonia", false, HSStatusVerified},
		{"pure butanes", HS2022, "2901.10", true, "saturated", true, HSStatusVerified},
		{"chloropicrin", HS2022, "2904.91", true, "chloropicrin", false, HSStatusVerified},
		{"chloropicrin 2017 from memory", HS2017, "2904.91", true, "chloropicrin", false, HSStatusUnverified},
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
// HS 2022 subheading (source: WCO HS 2022 subheadings 2903.41-2903.48, UN Comtrade H6).
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
	// Every HS 2022 subheading of heading 38.27 is now carried with its full wording
	// (source: HS 2022 text as reproduced at six digits in the UK, EU and US tariffs).
	for _, code := range []string{"3827.11", "3827.12", "3827.13", "3827.14", "3827.20", "3827.31", "3827.32", "3827.39", "3827.40",
		"3827.51", "3827.59", "3827.61", "3827.62", "3827.63", "3827.64", "3827.65", "3827.68", "3827.69", "3827.90"} {
		if s, ok := LookupHS(HS2022, code); !ok || s.Status != HSStatusVerified {
			t.Errorf("%s: %+v, want a verified subheading", code, s)
		}
	}
	// Subheadings that mix controlled and uncontrolled goods (derived from their "other" wording).
	for _, code := range []string{"2903.19", "2903.49", "2903.77", "2903.79", "3827.39", "3827.69", "3827.90"} {
		if s, _ := LookupHS(HS2022, code); !s.Shared {
			t.Errorf("%s should be Shared", code)
		}
	}
}

func TestMixtureHS(t *testing.T) {
	// Compositions of named blends: ASHRAE 34 nominal mass %, as in the seed blends.csv.
	// Subheading texts and thresholds: WCO HS 2022 heading 38.27 and HS 2017 subheadings
	// 3824.71-3824.79 (UN Comtrade H6/H5; the 38.27 wording as reproduced at six digits in the
	// UK, EU and US tariffs). Compositions marked invented are test inputs only.
	tests := []struct {
		name     string
		shares   []HSShare
		hs2022   string
		note2022 string // expected part of the HS 2022 note
		hs2017   string
		note2017 string
	}{
		{
			// R-404A 44/52/4 (ASHRAE 34); 3827.61: 15 % or more HFC-143a
			name:   "R-404A, 52 % HFC-143a",
			shares: []HSShare{{"HFC-125", GroupFI, 44, ""}, {"HFC-143a", GroupFI, 52, ""}, {"HFC-134a", GroupFI, 4, ""}},
			hs2022: "3827.61", note2022: "52 % by mass of HFC-143a",
			hs2017: "3824.78", note2017: "PFCs or HFCs",
		},
		{
			// R-507A 50/50 (ASHRAE 34)
			name:   "R-507A, exactly 50 % HFC-143a",
			shares: []HSShare{{"R-125", GroupFI, 50, ""}, {"R-143a", GroupFI, 50, ""}},
			hs2022: "3827.61", note2022: "HFC-143a",
			hs2017: "3824.78",
		},
		{
			// 3827.61 threshold: "15 % or more by mass of HFC-143a"; invented composition
			name:   "15 % HFC-143a is enough",
			shares: []HSShare{{"HFC-143a", GroupFI, 15, ""}, {"HFC-134a", GroupFI, 85, ""}},
			hs2022: "3827.61",
			hs2017: "3824.78",
		},
		{
			// below the 3827.61 threshold the 3827.64 text (30 % or more HFC-134a, no HFOs)
			// applies; invented composition
			name:   "14.9 % HFC-143a is not",
			shares: []HSShare{{"HFC-143a", GroupFI, 14.9, ""}, {"HFC-134a", GroupFI, 85.1, ""}},
			hs2022: "3827.64", note2022: "85.1 % HFC-134a",
			hs2017: "3824.78",
		},
		{
			// R-500 73.8/26.2 (ASHRAE 34); 3827.11 "whether or not containing ... HFCs"
			name:   "R-500 with CFC-12",
			shares: []HSShare{{"CFC-12", GroupAI, 73.8, ""}, {"HFC-152a", GroupFI, 26.2, ""}},
			hs2022: "3827.11", note2022: "CFC-12",
			hs2017: "3824.71", note2017: "CFC-12",
		},
		{
			// R-502 48.8/51.2 (ASHRAE 34): 3827.11 holds CFC mixtures whether or not with HCFCs
			name:   "R-502, CFC-115 with HCFC-22",
			shares: []HSShare{{"HCFC-22", GroupCI, 48.8, ""}, {"CFC-115", GroupAI, 51.2, ""}},
			hs2022: "3827.11",
			hs2017: "3824.71",
		},
		{
			// R-410A 50/50 (ASHRAE 34): not .61 (no HFC-143a), not .62 (50 < 55 % HFC-125),
			// .63 (40 % or more HFC-125)
			name:   "R-410A, HFC-32/125",
			shares: []HSShare{{"HFC-32", GroupFI, 50, ""}, {"HFC-125", GroupFI, 50, ""}},
			hs2022: "3827.63", note2022: "50 % HFC-125",
			hs2017: "3824.78",
		},
		{
			// R-407C 23/25/52 (ASHRAE 34): 25 % HFC-125 < 40; 52 % HFC-134a >= 30, no HFOs -> .64
			name:   "R-407C",
			shares: []HSShare{{"HFC-32", GroupFI, 23, ""}, {"HFC-125", GroupFI, 25, ""}, {"HFC-134a", GroupFI, 52, ""}},
			hs2022: "3827.64", note2022: "52 % HFC-134a",
			hs2017: "3824.78",
		},
		{
			// R-422D 65.1/31.5/3.4 (ASHRAE 34): 55 % or more HFC-125, no HFOs -> .62
			name:   "R-422D, 65.1 % HFC-125",
			shares: []HSShare{{"HFC-125", GroupFI, 65.1, ""}, {"HFC-134a", GroupFI, 31.5, ""}, {"R-600a", GroupNone, 3.4, ""}},
			hs2022: "3827.62", note2022: "65.1 % HFC-125",
			hs2017: "3824.78",
		},
		{
			// invented: 55 % HFC-125 with an HFO fails .62 ("not containing HFOs") but meets .63
			name:   "HFO moves 55 % HFC-125 from .62 to .63",
			shares: []HSShare{{"HFC-125", GroupFI, 55, ""}, {"HFO-1234yf", GroupNone, 45, ""}},
			hs2022: "3827.63",
			hs2017: "3824.78",
		},
		{
			// invented: 39.9 % HFC-125, 60.1 % HFC-32: below .63, .64 needs HFC-134a, .65 20/20 met
			name:   "below 40 % HFC-125, 20/20 rule",
			shares: []HSShare{{"HFC-125", GroupFI, 39.9, ""}, {"HFC-32", GroupFI, 60.1, ""}},
			hs2022: "3827.65", note2022: "60.1 % HFC-32 and 39.9 % HFC-125",
			hs2017: "3824.78",
		},
		{
			// R-449A 24.3/24.7/25.3/25.7 (ASHRAE 34): HFO excludes .64; 24.3 % HFC-32 and
			// 24.7 % HFC-125 meet .65
			name:   "R-449A, HFOs and 20/20",
			shares: []HSShare{{"HFC-32", GroupFI, 24.3, ""}, {"HFC-125", GroupFI, 24.7, ""}, {"HFO-1234yf", GroupNone, 25.3, ""}, {"HFC-134a", GroupFI, 25.7, ""}},
			hs2022: "3827.65",
			hs2017: "3824.78",
		},
		{
			// invented: 19.9 % HFC-32 misses the 20 % of .65; HFC-125 and HFC-134a are in 2903.44/.45 -> .68
			name:   "19.9 % HFC-32 misses .65",
			shares: []HSShare{{"HFC-32", GroupFI, 19.9, ""}, {"HFC-125", GroupFI, 30, ""}, {"HFO-1234yf", GroupNone, 50.1, ""}},
			hs2022: "3827.68",
			hs2017: "3824.78",
		},
		{
			// R-513A 56/44 (ASHRAE 34): HFO excludes .64 -> .68 (HFC-134a is of 2903.45)
			name:   "R-513A, HFO with HFC-134a",
			shares: []HSShare{{"HFO-1234yf", GroupNone, 56, ""}, {"HFC-134a", GroupFI, 44, ""}},
			hs2022: "3827.68", note2022: "2903.41-2903.48",
			hs2017: "3824.78",
		},
		{
			// invented: HFC-161 is in 2903.49, not 2903.41-2903.48 -> .69
			name:   "HFC-161 with propane: other",
			shares: []HSShare{{"HFC-161", GroupNone, 50, ""}, {"R-290", GroupNone, 50, ""}},
			hs2022: "3827.69", note2022: "none of the substances of 2903.41-2903.48",
			hs2017: "3824.78",
		},
		{
			// R-409A 60/25/15 (ASHRAE 34): HCFCs of 2903.71 and 2903.74, no HFC -> .32
			name:   "R-409A, HCFCs only",
			shares: []HSShare{{"HCFC-22", GroupCI, 60, ""}, {"HCFC-124", GroupCI, 25, ""}, {"HCFC-142b", GroupCI, 15, ""}},
			hs2022: "3827.32", note2022: "2903.71-2903.75",
			hs2017: "3824.74",
		},
		{
			// HCFC-124 is in 2903.79, not 2903.71-2903.75 (HS 2022 heading 29.03); invented composition
			name:   "HCFC-124 with propane",
			shares: []HSShare{{"HCFC-124", GroupCI, 90, ""}, {"R-290", GroupNone, 10, ""}},
			hs2022: "3827.39", note2022: "outside subheadings 2903.71-2903.75",
			hs2017: "3824.74",
		},
		{
			// R-408A 7/46/47 (ASHRAE 34): HCFC with substances of 2903.41-2903.48 -> .31
			name:   "R-408A, HCFC-22 with HFCs",
			shares: []HSShare{{"HFC-125", GroupFI, 7, ""}, {"HFC-143a", GroupFI, 46, ""}, {"HCFC-22", GroupCI, 47, ""}},
			hs2022: "3827.31", note2022: "HFC-125, HFC-143a",
			hs2017: "3824.74",
		},
		{
			// R-509A 44/56 (ASHRAE 34): HCFC-22 with a PFC only; PFC-218 is 2903.49 -> .32
			name:   "R-509A, HCFC with PFC",
			shares: []HSShare{{"HCFC-22", GroupCI, 44, ""}, {"PFC-218", GroupNone, 56, ""}},
			hs2022: "3827.32",
			hs2017: "3824.74",
		},
		{
			// R-508A 39/61 (ASHRAE 34)
			name:   "R-508A, HFC-23 with PFC-116",
			shares: []HSShare{{"HFC-23", GroupFII, 39, ""}, {"PFC-116", GroupNone, 61, ""}},
			hs2022: "3827.51", note2022: "HFC-23",
			hs2017: "3824.78",
		},
		{
			// invented: PFC with another HFC answers both the .5x and the .6x group texts
			name:   "PFC-218 with HFC-143a: two groups",
			shares: []HSShare{{"PFC-218", GroupNone, 50, ""}, {"HFC-143a", GroupFI, 50, ""}},
			hs2022: "", note2022: "3827.51-3827.59",
			hs2017: "3824.78",
		},
		{
			name:   "PFCs alone",
			shares: []HSShare{{"PFC-218", GroupNone, 50, ""}, {"PFC-116", GroupNone, 50, ""}},
			hs2022: "3827.59", note2022: "PFC-116, PFC-218",
			hs2017: "3824.78",
		},
		{
			name:   "halons",
			shares: []HSShare{{"halon-1211", GroupAII, 60, ""}, {"halon-1301", GroupAII, 40, ""}},
			hs2022: "3827.20", note2022: "halon-1211, halon-1301",
			hs2017: "3824.72",
		},
		{
			// 3827.12 and 3827.20 carry no exclusion of each other
			name:   "HBFC with halon: two texts",
			shares: []HSShare{{"HBFC-22B1", GroupCII, 50, ""}, {"halon-1301", GroupAII, 50, ""}},
			hs2022: "", note2022: "3827.12 (contains HBFCs (HBFC-22B1)) and 3827.20",
			hs2017: "3824.72",
		},
		{
			// invented: the HCFC group and 3827.40 do not exclude each other
			name:   "HCFC-22 with methyl bromide: two texts",
			shares: []HSShare{{"HCFC-22", GroupCI, 50, ""}, {"methyl bromide", GroupEI, 50, ""}},
			hs2022: "", note2022: "3827.40",
			hs2017: "3824.74",
		},
		{
			// names of the catalogue, classified by their group
			name:   "carbon tetrachloride by name",
			shares: []HSShare{{"carbon tetrachloride", GroupBII, 30, ""}, {"R-30", GroupNone, 70, ""}},
			hs2022: "3827.13",
			hs2017: "3824.75",
		},
		{
			name:   "methyl chloroform by name",
			shares: []HSShare{{"methyl chloroform", GroupBIII, 95, ""}, {"R-30", GroupNone, 5, ""}},
			hs2022: "3827.14",
			hs2017: "3824.76",
		},
		{
			// 3827.40 "Containing methyl bromide (bromomethane) or bromochloromethane"; invented
			name:   "methyl bromide with CO2",
			shares: []HSShare{{"methyl bromide", GroupEI, 98, ""}, {"R-744", GroupNone, 2, ""}},
			hs2022: "3827.40", note2022: "methyl bromide",
			hs2017: "3824.77",
		},
		{
			// methyl bromide 98 % with chloropicrin 2 % (common practice fumigant); chloropicrin,
			// CCl3NO2, is no halogenated hydrocarbon of the named classes
			name:   "methyl bromide with chloropicrin",
			shares: []HSShare{{"methyl bromide", GroupEI, 98, ""}, {"chloropicrin", GroupNone, 2, "CCl3NO2"}},
			hs2022: "3827.40",
			hs2017: "3824.77",
		},
		{
			name:   "dichloromethane with propane: other",
			shares: []HSShare{{"R-30", GroupNone, 40, ""}, {"R-290", GroupNone, 60, ""}},
			hs2022: "3827.90",
			hs2017: "3824.79",
		},
		{
			name:   "hydrocarbons only: not in the heading",
			shares: []HSShare{{"R-290", GroupNone, 60, ""}, {"R-600a", GroupNone, 40, ""}},
			hs2022: "", note2022: "do not apply",
			hs2017: "", note2017: "do not apply",
		},
		{
			// R-435A 80/20 (ASHRAE 34): HFC-152a is of 2903.43 -> .68
			name:   "dimethyl ether with HFC-152a",
			shares: []HSShare{{"R-E170", GroupNone, 80, ""}, {"HFC-152a", GroupFI, 20, ""}},
			hs2022: "3827.68",
			hs2017: "3824.78",
		},
		{
			name:   "unidentified component blocks a decision",
			shares: []HSShare{{"mystery gas", GroupNone, 50, ""}, {"HFC-143a", GroupFI, 50, ""}},
			hs2022: "", note2022: "mystery gas",
			hs2017: "", note2017: "mystery gas",
		},
		{
			// an unidentified component could be an HBFC, a halon or methyl bromide, whose texts
			// 3827.11 does not exclude
			name:   "unidentified component with CFCs",
			shares: []HSShare{{"mystery gas", GroupNone, 50, ""}, {"CFC-11", GroupAI, 50, ""}},
			hs2022: "", note2022: "mystery gas",
			hs2017: "3824.71",
		},
		{
			name:   "shares below 100 % leave an unidentified remainder",
			shares: []HSShare{{"HFC-143a", GroupFI, 50, ""}},
			hs2022: "", note2022: "remainder",
			hs2017: "", note2017: "remainder",
		},
		{
			name:   "structure written in place of a designation",
			shares: []HSShare{{"CH3CF3", GroupNone, 50, ""}, {"HFC-125", GroupFI, 50, ""}},
			hs2022: "3827.61",
			hs2017: "3824.78",
		},
		{
			name:   "bare formula cannot tell HFC-143 from HFC-143a",
			shares: []HSShare{{"C2H3F3", GroupNone, 50, ""}, {"HFC-125", GroupFI, 50, ""}},
			hs2022: "", note2022: "formula only",
			hs2017: "3824.78",
		},
		{
			name:   "HFO alone: not a derivative of methane, ethane or propane",
			shares: []HSShare{{"HFO-1234yf", GroupNone, 50, ""}, {"HFO-1234ze(E)", GroupNone, 50, ""}},
			hs2022: "", note2022: "do not apply",
			hs2017: "", note2017: "do not apply",
		},
		{name: "no components", shares: nil, hs2022: "", note2022: "no components", hs2017: "", note2017: "no components"},
		{
			name:   "negative share",
			shares: []HSShare{{"HFC-134a", GroupFI, -5, ""}, {"HFC-125", GroupFI, 105, ""}},
			hs2022: "", note2022: "0-100 %",
			hs2017: "", note2017: "0-100 %",
		},
		{
			name:   "shares above 100 %",
			shares: []HSShare{{"HFC-134a", GroupFI, 60, ""}, {"HFC-125", GroupFI, 60, ""}},
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

// TestMixtureHSReferenceBlends classifies every blend of the reference composition table and
// checks what must hold whatever the composition: a decided code is a verified subheading of
// its edition, a blend with a CFC and nothing HS 2022 names beside it goes to 3827.11 /
// 3824.71, and one with an HCFC and no CFC to 3824.74 (WCO HS 2022 heading 38.27 and HS 2017
// subheadings 3824.71-3824.79).
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
		blends[rec[0]] = append(blends[rec[0]], HSShare{rec[1], groups[rec[1]], pct, ""})
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
