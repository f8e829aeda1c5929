package validate

import (
	"hash/maphash"
	"regexp"
	"strings"
	"testing"

	"github.com/halovet/halovet/terms"
)

func fpBase() Record {
	return Record{
		Key: "K1", Line: 7, Direction: terms.DirectionImport, CompanyID: "CO-1", LicenceNumber: "lic-1",
		PartnerCountry: "xa", DeclarationDate: "2025-03-01", Substance: "R-404A", HSCode: "3827.61",
		TotalQuantity: "1250.50", Unit: "KG", PackageCount: 0, Purpose: terms.PurposeServicing,
		Composition: []DeclaredShare{{"HFC-125", 44}, {"HFC-143a", 52}, {"HFC-134a", 4}},
	}
}

func TestFingerprintNormalizes(t *testing.T) {
	base := fpBase()
	fp := Fingerprint(&base)
	if !regexp.MustCompile(`^[0-9a-f]{64}$`).MatchString(fp) {
		t.Fatalf("Fingerprint = %q, want 64 lower-case hex digits (SHA-256)", fp)
	}
	same := []struct {
		name string
		edit func(*Record)
	}{
		{"other key and line", func(r *Record) { r.Key = "K2"; r.Line = 99 }},
		{"quantity trailing zeros", func(r *Record) { r.TotalQuantity = "1250.5" }},
		{"unit word", func(r *Record) { r.Unit = "kilograms" }},
		{"partner case", func(r *Record) { r.PartnerCountry = " XA " }},
		{"licence case", func(r *Record) { r.LicenceNumber = "LIC-1" }},
		{"substance case and spaces", func(r *Record) { r.Substance = "  r-404a " }},
		{"hs dots", func(r *Record) { r.HSCode = "382761" }},
		{"composition order", func(r *Record) {
			r.Composition = []DeclaredShare{{"hfc-134a", 4}, {"HFC-125", 44}, {"HFC-143a", 52}}
		}},
	}
	for _, c := range same {
		r := fpBase()
		c.edit(&r)
		if got := Fingerprint(&r); got != fp {
			t.Errorf("%s: fingerprint changed; it should ignore this difference", c.name)
		}
	}
	differ := []struct {
		name string
		edit func(*Record)
	}{
		{"quantity", func(r *Record) { r.TotalQuantity = "1250.51" }},
		{"unit", func(r *Record) { r.Unit = "lb" }},
		{"company", func(r *Record) { r.CompanyID = "co-1" }},
		{"direction", func(r *Record) { r.Direction = terms.DirectionExport }},
		{"date", func(r *Record) { r.DeclarationDate = "2025-03-02" }},
		{"containers", func(r *Record) { r.PackageCount = 2 }},
		{"purpose", func(r *Record) { r.Purpose = terms.PurposeFeedstock }},
		{"condition", func(r *Record) { r.Condition = terms.ConditionUsed }},
		{"composition share", func(r *Record) { r.Composition[2].MassPct = 4.5 }},
		{"composition dropped", func(r *Record) { r.Composition = nil }},
		{"cas", func(r *Record) { r.CAS = "354-33-6" }},
		{"field moved between columns", func(r *Record) { r.CAS, r.Formula = "", ""; r.Formula = "x" }},
		{"unreadable", func(r *Record) { r.Unreadable = []FieldIssue{{Field: "purpose", Text: "fun"}} }},
	}
	for _, c := range differ {
		r := fpBase()
		c.edit(&r)
		if got := Fingerprint(&r); got == fp {
			t.Errorf("%s: fingerprint unchanged; it must change with the content", c.name)
		}
	}
	// Length prefixes keep adjacent fields apart.
	a, b := fpBase(), fpBase()
	a.CAS, a.Formula = "ab", "c"
	b.CAS, b.Formula = "a", "bc"
	if Fingerprint(&a) == Fingerprint(&b) {
		t.Error("moving text between adjacent fields must change the fingerprint")
	}
}

// TestContentFromTheRulesParsing: the content hash and Fingerprint reuse what the
// quantity rules parsed (the total, the fill and the unit); over quantities that parse,
// fail, carry a sign, are zero, negative or padded, and units known, unknown or empty,
// they are those of the record parsed afresh.
func TestContentFromTheRulesParsing(t *testing.T) {
	env := testEnv(t)
	seed := maphash.MakeSeed()
	quantities := []string{"", "10", " 10.50 ", "+5", "-3", "0", "1,5", "abc", "1e3", ".5", "0000.000"}
	units := []string{"kg", " KGS ", "t", "lb", "", "stone"}
	n := 0
	for _, total := range quantities {
		for _, fill := range quantities {
			for _, unit := range units {
				for _, packages := range []int64{0, 4, -1} {
					r := baseRecord()
					r.TotalQuantity, r.FillPerPackage, r.Unit, r.PackageCount = total, fill, unit, packages
					c := checker{env: env, r: &r, seed: &seed}
					c.rules()
					if want := contentHash(seed, &r, nil); c.fpHash != want {
						t.Errorf("total %q fill %q unit %q packages %d: content hash from the rules' parsing differs from the record's", total, fill, unit, packages)
					}
					if got, want := Check(env, &r, nil).Fingerprint, Fingerprint(&r); got != want {
						t.Errorf("total %q fill %q unit %q packages %d: Check's fingerprint %s; Fingerprint gives %s", total, fill, unit, packages, got, want)
					}
					n++
				}
			}
		}
	}
	if n != len(quantities)*len(quantities)*len(units)*3 {
		t.Fatalf("checked %d records", n)
	}
}

// TestFoldNameIsFieldsOfLower: the one-pass folding of names gives what lower-casing and
// collapsing the white space gives, for ASCII names with every kind of white space and for
// names outside ASCII.
func TestFoldNameIsFieldsOfLower(t *testing.T) {
	for _, s := range []string{"HFC-125", "  R-404A ", "r 404\tA", "R\n\v\f\r 22", "Ä HFC", "hfc\u00a0134a", "A  B   C", " \t ", "", "x", "MIXED case Name"} {
		if got, want := foldName(s), strings.Join(strings.Fields(strings.ToLower(s)), " "); got != want {
			t.Errorf("foldName(%q) = %q; want %q", s, got, want)
		}
	}
}
