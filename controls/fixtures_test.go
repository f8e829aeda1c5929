package controls

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
)

// Tolerances stated by the brief: ODP tonnes to 0.001, CO2-eq tonnes to 1. The computed
// values are far more precise; these are the reporting precisions.
const (
	tolODP  = 0.001 // ODP t
	tolCO2e = 1.0   // t CO2-eq
	tolT    = 1e-9  // metric t, for exact splits
)

// Substance factors used by the tests. ODPs: the ODP columns of Montreal Protocol Annexes A,
// B, C and E (Ozone Secretariat Handbook 2019). GWPs: the 100-year GWP columns the Kigali
// Amendment added to Annex A Group I, Annex C Group I and Annex F (equal to IPCC AR4 WG1
// Table 2.14); a substance with no GWP listed counts 0 (Annex C footnote). Every value is
// checked against testdata/reference/halocarbons.csv by TestFixturesMatchReference.
var (
	cfc11    = Substance{"CFC-11", substances.GroupAI, num("1.0"), num("4750")}             // source: MP Annex A Group I ODP; Kigali Annex A GWP
	cfc12    = Substance{"CFC-12", substances.GroupAI, num("1.0"), num("10900")}            // source: MP Annex A Group I ODP; Kigali Annex A GWP
	ccl4     = Substance{"carbon tetrachloride", substances.GroupBII, num("1.1"), num("0")} // source: MP Annex B Group II ODP; Protocol lists no GWP for Annex B
	hcfc22   = Substance{"HCFC-22", substances.GroupCI, num("0.055"), num("1810")}          // source: MP Annex C Group I ODP; Kigali Annex C GWP
	hcfc141b = Substance{"HCFC-141b", substances.GroupCI, num("0.11"), num("725")}          // source: MP Annex C Group I ODP; Kigali Annex C GWP
	hcfc142b = Substance{"HCFC-142b", substances.GroupCI, num("0.065"), num("2310")}        // source: MP Annex C Group I ODP; Kigali Annex C GWP
	hcfc31   = Substance{"HCFC-31", substances.GroupCI, num("0.02"), num("0")}              // source: MP Annex C Group I ODP; no Kigali GWP listed → 0 (Annex C footnote)
	mbr      = Substance{"methyl bromide", substances.GroupEI, num("0.6"), num("0")}        // source: MP Annex E ODP; no Protocol GWP
	hfc134a  = Substance{"HFC-134a", substances.GroupFI, num("0"), num("1430")}             // source: MP Annex F Group I GWP
	hfc125   = Substance{"HFC-125", substances.GroupFI, num("0"), num("3500")}              // source: MP Annex F Group I GWP
	hfc32    = Substance{"HFC-32", substances.GroupFI, num("0"), num("675")}                // source: MP Annex F Group I GWP
	hfc23    = Substance{"HFC-23", substances.GroupFII, num("0"), num("14800")}             // source: MP Annex F Group II GWP
	propane  = Substance{"R-290", substances.GroupNone, num("0"), num("0")}                 // not controlled: in no Annex of the Protocol
)

// num is a figure written in a test as a decimal literal, exactly.
func num(s string) exact.Decimal { return exact.MustParse(s) }

func rec(year int, s Substance, f Flows) Record { return Record{Year: year, Substance: s, Flows: f} }

// near checks an exact figure against a value within a reporting tolerance.
func near(t *testing.T, what string, got exact.Decimal, want, tol float64) {
	t.Helper()
	if g := got.Float64(); math.IsNaN(g) || math.Abs(g-want) > tol {
		t.Errorf("%s = %s, want %.6f (±%g)", what, got, want, tol)
	}
}

// exactly checks an exact figure against its decimal.
func exactly(t *testing.T, what string, got exact.Decimal, want string) {
	t.Helper()
	if !got.Equal(exact.MustParse(want)) {
		t.Errorf("%s = %s, want exactly %s", what, got, want)
	}
}

// wantYear is a base year's expected amount.
type wantYear struct {
	Year    int
	Amount  float64
	HasData bool
}

func mustRulebook(t testing.TB) *Rulebook {
	t.Helper()
	rb, err := DefaultRulebook()
	if err != nil {
		t.Fatalf("embedded rulebook does not parse: %v", err)
	}
	return rb
}

// TestFixturesMatchReference checks the test fixtures' ODP and GWP against the repository's
// independently gathered reference data (testdata/reference/halocarbons.csv: odp and
// gwp100_ar4 columns; the Protocol GWPs equal the IPCC AR4 WG1 Table 2.14 values). A missing
// table fails the test.
func TestFixturesMatchReference(t *testing.T) {
	path := filepath.Join("..", "testdata", "reference", "halocarbons.csv")
	f, err := os.Open(path)
	if err != nil {
		t.Fatalf("reference table missing: %v", err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	byName := map[string][]string{}
	for _, r := range rows[1:] {
		byName[r[col["designation"]]] = r
	}
	ref := func(s string) exact.Decimal {
		if s == "" {
			return exact.Zero
		}
		v, err := exact.Parse(s)
		if err != nil {
			t.Fatalf("reference value %q: %v", s, err)
		}
		return v
	}
	for _, s := range []Substance{cfc11, cfc12, ccl4, hcfc22, hcfc141b, hcfc142b, hcfc31, mbr, hfc134a, hfc125, hfc32, hfc23} {
		r, ok := byName[s.Designation]
		if !ok {
			t.Errorf("%s not in %s", s.Designation, path)
			continue
		}
		if g := substances.Group(r[col["mp_annex_group"]]); g != s.Group {
			t.Errorf("%s group = %s in reference, fixture has %s", s.Designation, g, s.Group)
		}
		if v := ref(r[col["odp"]]); !v.Equal(s.ODP) {
			t.Errorf("%s ODP = %v in reference, fixture has %v", s.Designation, v, s.ODP)
		}
		// Protocol GWPs exist for A/I, C/I and F only; elsewhere the fixture carries 0.
		if s.Group == substances.GroupAI || s.Group == substances.GroupCI || s.Group == substances.GroupFI || s.Group == substances.GroupFII {
			if v := ref(r[col["gwp100_ar4"]]); !v.Equal(s.GWP) {
				t.Errorf("%s GWP = %v in reference (AR4 = Protocol), fixture has %v", s.Designation, v, s.GWP)
			}
		}
	}
}
