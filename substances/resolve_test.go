package substances

import (
	"slices"
	"sort"
	"strings"
	"testing"
)

func designations(cs []Candidate) []string {
	out := make([]string, len(cs))
	for i, c := range cs {
		out[i] = c.Designation
	}
	return out
}

func TestResolve(t *testing.T) {
	c := testCatalogue(t)
	tests := []struct {
		id        string
		unique    string    // the unique answer, "" when none is expected
		match     MatchKind // kind of the unique answer
		ambiguous bool
		cands     []string // when set: all candidates, any order
		noteHas   string   // when set: part of the note
	}{
		// Designation styles. source: ASHRAE 34 numbering; HCFC-22 CAS 75-45-6 (testdata/reference/halocarbons.csv)
		{id: "R-22", unique: "HCFC-22", match: MatchSynonym},
		{id: "R22", unique: "HCFC-22", match: MatchSynonym},
		{id: "HCFC-22", unique: "HCFC-22", match: MatchDesignation},
		{id: "hcfc 22", unique: "HCFC-22", match: MatchDesignation},
		{id: "  HCFC‐22 ", unique: "HCFC-22", match: MatchDesignation},
		{id: "CHClF2", unique: "HCFC-22", match: MatchFormula},
		{id: "CHF2Cl", unique: "HCFC-22", match: MatchFormula},
		{id: "75-45-6", unique: "HCFC-22", match: MatchCAS},
		{id: "chlorodifluoromethane", unique: "HCFC-22", match: MatchChemicalName},
		{id: "Chlorodifluoromethane", unique: "HCFC-22", match: MatchChemicalName},
		{id: "R-404A", unique: "R-404A", match: MatchDesignation},
		{id: "404a", unique: "R-404A", match: MatchDesignation},
		{id: "R-507", unique: "R-507A", match: MatchSynonym},
		{id: "811-97-2", unique: "HFC-134a", match: MatchCAS}, // source: testdata/reference/halocarbons.csv
		{id: "halon-1301", unique: "halon-1301", match: MatchDesignation},
		{id: "R-13B1", unique: "halon-1301", match: MatchSynonym},
		{id: "CO2", unique: "R-744", match: MatchFormula},
		{id: "co2", unique: "R-744", match: MatchFormula},
		{id: "NH3", unique: "R-717", match: MatchFormula},
		// Isomers: a structure picks one, a molecular formula does not.
		{id: "C2H2F4", ambiguous: true, cands: []string{"HFC-134", "HFC-134a"}, noteHas: "isomers"},
		{id: "CH2FCF3", unique: "HFC-134a", match: MatchFormula},
		{id: "CF3CH2F", unique: "HFC-134a", match: MatchFormula}, // written the other way round
		{id: "CHF2CHF2", unique: "HFC-134", match: MatchFormula},
		{id: "C2HCl2F3", ambiguous: true, cands: []string{"HCFC-123", "HCFC-123 (isomer group)"}},
		{id: "CHCl2CF3", unique: "HCFC-123", match: MatchFormula},
		{id: "C3HCl2F5", ambiguous: true, cands: []string{"HCFC-225", "HCFC-225ca", "HCFC-225cb"}},
		{id: "C2H3Cl3", unique: "methyl chloroform", match: MatchFormula},
		// Decoded numbers that are not catalogue names. source: Art. 1 para 4 (isomers included),
		// Art. 1 para 4; ASHRAE 34 / ISO 817 isomer letters
		{id: "R-123a", unique: "HCFC-123 (isomer group)", match: MatchDecodedNumber, noteHas: "decoded"},
		{id: "HCFC-124a", unique: "HCFC-124 (isomer group)", match: MatchDecodedNumber},
		{id: "HCFC-141a", unique: "HCFC-141", match: MatchDecodedNumber},
		{id: "CFC-113a", unique: "CFC-113", match: MatchDecodedNumber},
		{id: "HCFC-132b", unique: "HCFC-132", match: MatchDecodedNumber},
		{id: "HBFC-123B2", unique: "HBFC-123B2", match: MatchDesignation},
		{id: "R-1234ze", unique: "HFO-1234ze(E)", match: MatchDecodedNumber, noteHas: "stereoisomer"},
		{id: "R-140", noteHas: "only other isomers"},     // 1,1,2-trichloroethane is not controlled (Annex B footnote)
		{id: "HFC-245cb", noteHas: "only other isomers"}, // not an Annex F substance
		{id: "halon 1202", noteHas: "CBr2F2"},
		// HS codes never prove identity. source: WCO HS 2022 "other" subheadings hold uncontrolled goods too
		{id: "2903.45", ambiguous: true, cands: []string{"HFC-134", "HFC-134a"}, noteHas: "does not identify"},
		{id: "2903.19", ambiguous: true, cands: []string{"methyl chloroform"}, noteHas: "outside the catalogue"},
		{id: "2903.41", unique: "HFC-23", match: MatchHSCode},
		{id: "2903.14", unique: "carbon tetrachloride", match: MatchHSCode},
		// Unknown and malformed.
		{id: "75-45-7", noteHas: "wrong check digit"},
		{id: "R-4O4A", noteHas: "no catalogue entry"},
		{id: strings.Repeat("R-22", 60), noteHas: "longer than"},
		{id: "", noteHas: "empty"},
		{id: "xyzzy", noteHas: "no catalogue entry"},
		{id: "CH4", noteHas: "fits no catalogue substance"},
		{id: "2903.62", noteHas: "no catalogue substance"},
	}
	for _, tc := range tests {
		t.Run(tc.id, func(t *testing.T) {
			r := c.Resolve(tc.id)
			u, ok := r.Unique()
			if tc.unique != "" {
				if !ok || u.Designation != tc.unique || u.Match != tc.match {
					t.Fatalf("Resolve(%q) unique=%v %q by %v; want %q by %v (candidates %v, note %q)", tc.id, ok, u.Designation, u.Match, tc.unique, tc.match, designations(r.Candidates), r.Note)
				}
			} else if ok {
				t.Fatalf("Resolve(%q) gave the unique answer %q; want none (candidates %v)", tc.id, u.Designation, designations(r.Candidates))
			}
			if r.Ambiguous != tc.ambiguous {
				t.Errorf("Ambiguous = %v, want %v", r.Ambiguous, tc.ambiguous)
			}
			if tc.cands != nil {
				got := designations(r.Candidates)
				sort.Strings(got)
				want := slices.Clone(tc.cands)
				sort.Strings(want)
				if !slices.Equal(got, want) {
					t.Errorf("candidates %v, want %v", got, want)
				}
			}
			if tc.noteHas != "" && !strings.Contains(r.Note, tc.noteHas) {
				t.Errorf("note %q does not mention %q", r.Note, tc.noteHas)
			}
		})
	}
}

func TestResolveManyHSCandidates(t *testing.T) {
	c := testCatalogue(t)
	r := c.Resolve("2903.79")
	if !r.Ambiguous || len(r.Candidates) < 60 {
		t.Fatalf("2903.79: ambiguous=%v with %d candidates; want ambiguous with the remaining HCFCs, HBFCs and bromochloromethane", r.Ambiguous, len(r.Candidates))
	}
	groups := map[Group]bool{}
	for _, cand := range r.Candidates {
		groups[cand.Group] = true
		if cand.Match != MatchHSCode {
			t.Errorf("%s matched by %v", cand.Designation, cand.Match)
		}
	}
	// source: WCO HS 2022 2903.79 "other" holds the remaining HCFCs, HBFCs and bromochloromethane
	for _, g := range []Group{GroupCI, GroupCII, GroupCIII} {
		if !groups[g] {
			t.Errorf("2903.79 candidates hold no %s substance", g)
		}
	}
	r = c.Resolve("2903.39") // HS 2017: all HFCs and methyl bromide
	if !r.Ambiguous || len(r.Candidates) < 19 {
		t.Errorf("HS 2017 2903.39: %d candidates, ambiguous=%v", len(r.Candidates), r.Ambiguous)
	}
}

func TestResolveWrongCAS(t *testing.T) {
	c := testCatalogue(t)
	r := c.Resolve("811-97-3") // HFC-134a is 811-97-2 (testdata/reference/halocarbons.csv)
	if len(r.Candidates) != 0 {
		t.Fatalf("a wrong check digit gave candidates %v", designations(r.Candidates))
	}
	if !strings.Contains(r.Note, "check digit") || !strings.Contains(r.Note, "give 2") {
		t.Errorf("note %q does not say the check digit should be 2", r.Note)
	}
	if !slices.Equal(r.Suggestions, []string{"811-97-2 (HFC-134a)"}) {
		t.Errorf("suggestions %v, want the corrected number", r.Suggestions)
	}
	r = c.Resolve("50-00-0") // formaldehyde: valid, not in the catalogue
	if len(r.Candidates) != 0 || !strings.Contains(r.Note, "no catalogue substance") {
		t.Errorf("valid foreign CAS: candidates %v note %q", designations(r.Candidates), r.Note)
	}
}

func TestResolveSuggestions(t *testing.T) {
	c := testCatalogue(t)
	tests := []struct {
		id   string
		want string // must be among the suggestions
	}{
		{"R-4O4A", "R-404A"},
		{"R-410", "R-410A"},
		{"HCFC-2", "HCFC-22"},
		{"HFC-134x", "HFC-134a"},
		{"chlorodifluormethane", "chlorodifluoromethane (HCFC-22)"},
		{"isobutan", "isobutane (R-600a)"},
	}
	for _, tc := range tests {
		t.Run(tc.id, func(t *testing.T) {
			r := c.Resolve(tc.id)
			if len(r.Candidates) != 0 {
				t.Fatalf("unknown identifier gave candidates %v: a silent guess", designations(r.Candidates))
			}
			if !slices.Contains(r.Suggestions, tc.want) {
				t.Errorf("suggestions %v do not include %q", r.Suggestions, tc.want)
			}
			if len(r.Suggestions) > maxSuggestions {
				t.Errorf("%d suggestions, limit %d", len(r.Suggestions), maxSuggestions)
			}
		})
	}
}

func TestUnique(t *testing.T) {
	a := Candidate{Designation: "A", Score: 0.9}
	b := Candidate{Designation: "B", Score: 0.8}
	tests := []struct {
		name string
		r    Resolution
		want string
	}{
		{"one", Resolution{Candidates: []Candidate{a}}, "A"},
		{"best of two", Resolution{Candidates: []Candidate{a, b}}, "A"},
		{"tie", Resolution{Candidates: []Candidate{a, a}}, ""},
		{"flagged ambiguous", Resolution{Candidates: []Candidate{a}, Ambiguous: true}, ""},
		{"none", Resolution{}, ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			u, ok := tc.r.Unique()
			if ok != (tc.want != "") || u.Designation != tc.want {
				t.Errorf("Unique() = %q, %v; want %q", u.Designation, ok, tc.want)
			}
		})
	}
}

func TestMatchKindString(t *testing.T) {
	for k := MatchDesignation; k <= MatchDecodedNumber; k++ {
		if s := k.String(); s == "" || strings.HasPrefix(s, "MatchKind(") {
			t.Errorf("%d has no name", k)
		}
	}
}

func TestResolveExactIsAllocationFree(t *testing.T) {
	c := testCatalogue(t)
	for _, id := range []string{"R-22", "hcfc 22", "R-404A", "404a", "chlorodifluoromethane", "CHClF2"} {
		if n := testing.AllocsPerRun(100, func() { c.Resolve(id) }); n != 0 {
			t.Errorf("Resolve(%q) allocates %v times per call, want 0", id, n)
		}
	}
}

func FuzzResolve(f *testing.F) {
	for _, s := range []string{"R-22", "hcfc 22", "CHF2Cl", "75-45-6", "75-45-7", "2903.45", "R-123a", "halon 1202",
		"CF3CH2F", "R-4O4A", "404a", "(CF3)2CFH", "c-C4F8", "R-1234ze(Z)", "--", "2903", "1-1-1", "HCFC-123 (isomer group)"} {
		f.Add(s)
	}
	c := testCatalogue(f)
	f.Fuzz(func(t *testing.T, id string) {
		r := c.Resolve(id)
		if len(r.Candidates) == 0 && r.Note == "" {
			t.Fatalf("Resolve(%q): no candidate and no note", id)
		}
		for i := 1; i < len(r.Candidates); i++ {
			if r.Candidates[i].Score > r.Candidates[i-1].Score {
				t.Fatalf("Resolve(%q): candidates not sorted best first", id)
			}
		}
		for _, cand := range r.Candidates {
			_, isSub := c.Substance(cand.Designation)
			_, isBlend := c.Blend(cand.Designation)
			if !isSub && !isBlend {
				t.Fatalf("Resolve(%q): candidate %q is not in the catalogue", id, cand.Designation)
			}
		}
		if u, ok := r.Unique(); ok && (r.Ambiguous || u.Designation == "") {
			t.Fatalf("Resolve(%q): unique answer from an ambiguous resolution", id)
		}
	})
}
