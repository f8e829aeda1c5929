package substances

import (
	"errors"
	"strings"
	"testing"
)

// TestCatalogueDesignationsRoundTrip: for every single-compound entry of the seed
// catalogue whose designation is a refrigerant number (methane, ethane and propane
// series, halons), the number decodes to the entry's formula, and the entry's structure
// encodes back to the same number. Entries named in words (carbon tetrachloride, methyl
// bromide, ...) and isomer groups without one structure have nothing to round-trip.
// source of every expected value: the seed catalogue itself (common practice: a codec
// round trip checks consistency, not the data).
func TestCatalogueDesignationsRoundTrip(t *testing.T) {
	subs, _, err := Seed()
	if err != nil {
		t.Fatal(err)
	}
	tried, decoded := 0, 0
	for _, s := range subs {
		d, err := ParseDesignation(s.Designation)
		if errors.Is(err, ErrNotSingleCompound) || (err != nil && !strings.ContainsAny(s.Designation, "0123456789")) {
			continue
		}
		if err != nil {
			if s.IsomerCount > 1 || strings.Contains(s.Designation, "(") {
				continue // an isomer group named after its formula
			}
			t.Errorf("%s: %v", s.Designation, err)
			continue
		}
		f, err := ParseFormula(s.Formula)
		if err != nil {
			t.Fatalf("%s: formula %q: %v", s.Designation, s.Formula, err)
		}
		if d.Formula == nil {
			continue // a blend-like or non-halocarbon number (R-600a, R-744) is looked up, not decoded
		}
		if !d.Formula.Equal(f) {
			t.Errorf("%s decodes to %s; the catalogue says %s", s.Designation, d.Formula.Hill(), s.Formula)
			continue
		}
		decoded++
		if s.Structure == "" || s.IsomerCount > 1 || d.Prefix == "halon" || isUnsaturated(d) {
			continue
		}
		enc, err := EncodeDesignation(s.Structure)
		if err != nil {
			if errors.Is(err, ErrIsomerRule) {
				continue // butanes and longer: no suffix rule to encode with
			}
			t.Errorf("%s: EncodeDesignation(%q): %v", s.Designation, s.Structure, err)
			continue
		}
		if want := d.Canonical(); enc != want {
			t.Errorf("%s: structure %s encodes to %s, want %s", s.Designation, s.Structure, enc, want)
		}
		tried++
	}
	// The seed holds 34 numbered single compounds with a structure and about 80 numbered
	// isomer groups (decoded only: a group has no one structure to encode).
	if tried < 30 || decoded < 100 {
		t.Fatalf("%d entries round-tripped and %d decoded; the seed catalogue has at least 30 and 100", tried, decoded)
	}
	t.Logf("%d catalogue entries round-tripped, %d numbered entries decoded to their formula", tried, decoded)
}

func isUnsaturated(d Designation) bool {
	return len(strings.TrimLeft(d.Number, "C")) >= 4 && d.Number[0] == '1'
}
