package substances

import (
	"errors"
	"slices"
	"sync"
	"testing"
)

var (
	seedCatOnce sync.Once
	seedCat     *Catalogue
	seedCatErr  error
)

// testCatalogue returns the catalogue built from the seed, once per test binary.
func testCatalogue(tb testing.TB) *Catalogue {
	tb.Helper()
	seedCatOnce.Do(func() {
		subs, blends, err := Seed()
		if err != nil {
			seedCatErr = err
			return
		}
		seedCat, seedCatErr = NewCatalogue(subs, blends)
	})
	if seedCatErr != nil {
		tb.Fatalf("seed catalogue: %v", seedCatErr)
	}
	return seedCat
}

// small is a hand-made catalogue for validation tests (values from the seed's sources).
func small() ([]Substance, []Blend) {
	subs := []Substance{
		{Designation: "HFC-32", Synonyms: []string{"R-32"}, ChemicalName: "difluoromethane", Formula: "CH2F2", CAS: "75-10-5", Group: GroupFI,
			GWP: map[GWPSet]float64{SetProtocol: 675, SetAR4: 675}, SafetyClass: "A2L"},
		{Designation: "HFC-125", Synonyms: []string{"R-125"}, ChemicalName: "pentafluoroethane", Formula: "C2HF5", CAS: "354-33-6", Group: GroupFI,
			GWP: map[GWPSet]float64{SetProtocol: 3500, SetAR4: 3500}, SafetyClass: "A1"},
	}
	blends := []Blend{{Designation: "R-410A", Type: "zeotrope", Components: []Component{{Designation: "HFC-32", MassPct: 50}, {Designation: "HFC-125", MassPct: 50}}}}
	return subs, blends
}

func TestNewCatalogueRejects(t *testing.T) {
	tests := []struct {
		name   string
		change func(subs []Substance, blends []Blend) ([]Substance, []Blend)
		field  string
	}{
		{"empty designation", func(s []Substance, b []Blend) ([]Substance, []Blend) { s[0].Designation = " "; return s, b }, "Designation"},
		{"name used twice", func(s []Substance, b []Blend) ([]Substance, []Blend) { s[1].Synonyms = []string{"r 32"}; return s, b }, "name"},
		{"blend named like a substance", func(s []Substance, b []Blend) ([]Substance, []Blend) { b[0].Synonyms = []string{"HFC-32"}; return s, b }, "name"},
		{"unknown group", func(s []Substance, b []Blend) ([]Substance, []Blend) { s[0].Group = "G/I"; return s, b }, "Group"},
		{"negative ODP", func(s []Substance, b []Blend) ([]Substance, []Blend) { s[0].ODP = -1; return s, b }, "ODP"},
		{"bad CAS", func(s []Substance, b []Blend) ([]Substance, []Blend) { s[0].CAS = "75-10-6"; return s, b }, "CAS"},
		{"bad formula", func(s []Substance, b []Blend) ([]Substance, []Blend) { s[0].Formula = "CH2Xx"; return s, b }, "Formula"},
		{"unknown safety class", func(s []Substance, b []Blend) ([]Substance, []Blend) { s[0].SafetyClass = "C9"; return s, b }, "SafetyClass"},
		{"unknown component", func(s []Substance, b []Blend) ([]Substance, []Blend) {
			b[0].Components[1].Designation = "HFC-999"
			return s, b
		}, "Components[1].Designation"},
		{"component twice", func(s []Substance, b []Blend) ([]Substance, []Blend) {
			b[0].Components[1].Designation = "r32"
			return s, b
		}, "Components[1].Designation"},
		{"zero share", func(s []Substance, b []Blend) ([]Substance, []Blend) {
			b[0].Components[1].MassPct = 0
			return s, b
		}, "Components[1].MassPct"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s, b := tc.change(small())
			_, err := NewCatalogue(s, b)
			var ce *CatalogueError
			if !errors.As(err, &ce) || !errors.Is(err, ErrInvalidCatalogue) {
				t.Fatalf("NewCatalogue error %v, want a *CatalogueError", err)
			}
			if ce.Field != tc.field {
				t.Errorf("field %q, want %q (%v)", ce.Field, tc.field, err)
			}
		})
	}
	t.Run("composition not 100", func(t *testing.T) {
		s, b := small()
		b[0].Components[1].MassPct = 49.5
		_, err := NewCatalogue(s, b)
		var ce *CompositionError
		if !errors.As(err, &ce) || !errors.Is(err, ErrInvalidCatalogue) || ce.Sum != 99.5 {
			t.Fatalf("error %v, want a *CompositionError with sum 99.5 wrapped in ErrInvalidCatalogue", err)
		}
	})
}

func TestCatalogueIsASnapshot(t *testing.T) {
	s, b := small()
	c, err := NewCatalogue(s, b)
	if err != nil {
		t.Fatal(err)
	}
	s[0].GWP[SetAR4] = 1
	s[0].Synonyms[0] = "changed"
	b[0].Components[0].MassPct = 1
	got, ok := c.Substance("R-32")
	if !ok || got.GWP[SetAR4] != 675 {
		t.Errorf("catalogue changed with its input: %+v", got)
	}
	bl, _ := c.Blend("R-410A")
	if bl.Components[0].MassPct != 50 {
		t.Errorf("blend changed with its input: %+v", bl.Components)
	}
	if got.MolarMass == 0 {
		t.Error("molar mass was not computed from the formula")
	}
}

func TestCatalogueLookup(t *testing.T) {
	c := testCatalogue(t)
	tests := []struct {
		name      string
		substance string // designation expected from Substance, "" for none
		blend     string // designation expected from Blend, "" for none
	}{
		{"R-22", "HCFC-22", ""},
		{"r 22", "HCFC-22", ""},
		{"Hcfc‐22", "HCFC-22", ""}, // Unicode hyphen, as printed in the Handbook
		{"22", "HCFC-22", ""},
		{"chlorodifluoromethane", "HCFC-22", ""},
		{"halon 1301", "halon-1301", ""},
		{"R-13B1", "halon-1301", ""},
		{"CTC", "carbon tetrachloride", ""},
		{"1,1,1-trichloroethane", "methyl chloroform", ""},
		{"R-404A", "", "R-404A"},
		{"r404a", "", "R-404A"},
		{"R-507", "", "R-507A"},
		{"HFO-1234ze(E)", "HFO-1234ze(E)", ""},
		{"propane", "R-290", ""},
		{"R-4040A", "", ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s, ok := c.Substance(tc.name)
			if (tc.substance != "") != ok || (ok && s.Designation != tc.substance) {
				t.Errorf("Substance(%q) = %v, %v; want %q", tc.name, s, ok, tc.substance)
			}
			b, ok := c.Blend(tc.name)
			if (tc.blend != "") != ok || (ok && b.Designation != tc.blend) {
				t.Errorf("Blend(%q) = %v, %v; want %q", tc.name, b, ok, tc.blend)
			}
		})
	}
}

func TestSubstancesOrder(t *testing.T) {
	c := testCatalogue(t)
	list := c.Substances()
	if list[0].Designation != "CFC-11" {
		t.Errorf("first substance %s, want CFC-11 (Annex A Group I)", list[0].Designation)
	}
	pos := map[string]int{}
	for i, s := range list {
		pos[s.Designation] = i
		if i > 0 && groupRank(list[i-1].Group) > groupRank(s.Group) {
			t.Errorf("%s (%s) after %s (%s): not in Annex order", s.Designation, s.Group, list[i-1].Designation, list[i-1].Group)
		}
	}
	for _, pair := range [][2]string{{"HCFC-22", "HCFC-123"}, {"HCFC-141", "HCFC-141b"}, {"HFC-32", "HFC-125"}, {"methyl bromide", "HFC-23"}, {"HFC-23", "R-290"}} {
		if pos[pair[0]] > pos[pair[1]] {
			t.Errorf("%s listed after %s", pair[0], pair[1])
		}
	}
	list[0] = nil
	if c.Substances()[0] == nil {
		t.Error("Substances returned the catalogue's own slice")
	}
	blends := c.Blends()
	// Numbered blends first (R-401A..R-513A), then the mixtures without a number.
	last := blends[len(blends)-1]
	if blends[0].Designation != "R-401A" || last.Type != BlendMixture {
		t.Errorf("blends run %s..%s (%s), want R-401A first and the unnumbered mixtures last", blends[0].Designation, last.Designation, last.Type)
	}
	for i, b := range blends {
		if b.Designation == "R-513A" && (i+1 == len(blends) || blends[i+1].Type != BlendMixture) {
			t.Errorf("R-513A, the last numbered blend, is not followed by the mixtures")
		}
	}
}

func TestBlendGroups(t *testing.T) {
	c := testCatalogue(t)
	// source: component groups of the seeded compositions (ASHRAE 34) and the Annexes
	tests := map[string][]Group{
		"R-401A": {GroupCI, GroupFI},  // HCFC-22, HFC-152a, HCFC-124
		"R-502":  {GroupAI, GroupCI},  // HCFC-22, CFC-115
		"R-503":  {GroupBI, GroupFII}, // HFC-23, CFC-13
		"R-404A": {GroupFI},
		"R-508A": {GroupFII}, // HFC-23 with the uncontrolled PFC-116
		"R-500":  {GroupAI, GroupFI},
		"R-406A": {GroupCI}, // HCFC-22, isobutane, HCFC-142b
	}
	for name, want := range tests {
		b, ok := c.Blend(name)
		if !ok {
			t.Fatalf("no blend %s", name)
		}
		if got := c.BlendGroups(b); !slices.Equal(got, want) {
			t.Errorf("BlendGroups(%s) = %v, want %v", name, got, want)
		}
	}
	if got := c.BlendGroups(&Blend{Designation: "R-999Z"}); got != nil {
		t.Errorf("BlendGroups of a foreign blend = %v, want nil", got)
	}
}

func TestCatalogueConcurrentReads(t *testing.T) {
	c := testCatalogue(t)
	var wg sync.WaitGroup
	for g := 0; g < 8; g++ {
		wg.Add(1)
		go func(g int) {
			defer wg.Done()
			for i := 0; i < 200; i++ {
				if _, ok := c.Resolve("R-22").Unique(); !ok {
					t.Error("R-22 did not resolve")
					return
				}
				ev, err := c.Evaluate("R-404A", float64(g*100+i))
				if err != nil || len(ev.Components) != 3 {
					t.Errorf("Evaluate: %v", err)
					return
				}
				_ = c.Resolve("R-4O4A") // suggestions path
			}
		}(g)
	}
	wg.Wait()
}
