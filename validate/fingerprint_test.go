package validate

import (
	"regexp"
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
