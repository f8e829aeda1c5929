package validate

import (
	"strings"
	"testing"

	"github.com/halovet/halovet/substances"
)

func init() { ruleCases = append(ruleCases, limitCases...) }

// repeatedShares lists one identifier n times.
func repeatedShares(id string, n int, pct float64) []DeclaredShare {
	out := make([]DeclaredShare, n)
	for i := range out {
		out[i] = DeclaredShare{id, pct}
	}
	return out
}

var limitCases = []ruleCase{
	// Text the database cannot hold or a person cannot read safely.
	fire(CodeFieldTextInvalid, "NUL in formula", func(r *Record) { r.Formula = "CHCl\x00F2" }, "declared_formula", "U+0000 (NUL)", "byte 5", "checked no further"),
	fire(CodeFieldTextInvalid, "NUL in company", func(r *Record) { r.CompanyID = "CO\x00-1" }, "company_id", "NUL"),
	fire(CodeFieldTextInvalid, "invalid UTF-8 in substance", func(r *Record) { r.Substance = "HCFC-22\xff" }, "substance", "not valid UTF-8"),
	fire(CodeFieldTextInvalid, "right-to-left override in licence", func(r *Record) { r.LicenceNumber = "XA-IMP-\u202e100-5202" }, "licence_number", "U+202E"),
	fire(CodeFieldTextInvalid, "zero-width space in partner", func(r *Record) { r.PartnerCountry = "X\u200bB" }, "partner_country", "U+200B"),
	fire(CodeFieldTextInvalid, "tab inside CAS", func(r *Record) { r.CAS = "75-45\t-6" }, "declared_cas_number", "U+0009"),
	fire(CodeFieldTextInvalid, "C1 control in unit", func(r *Record) { r.Unit = "k\u0085g" }, "quantity_unit", "U+0085"),
	fire(CodeFieldTextInvalid, "NUL in a component", func(r *Record) {
		r404A(r)
		r.Composition = []DeclaredShare{{"HFC-125", 44}, {"HFC-143a\x00", 52}, {"HFC-134a", 4}}
	}, "declared_composition"),
	silent(CodeFieldTextInvalid, "clean record", nil),
	silent(CodeFieldTextInvalid, "printable non-ASCII text", func(r *Record) { r.Substance = "chlorodifluorométhane" }),
	silent(CodeFieldTextInvalid, "surrounding spaces and tabs are trimmed", func(r *Record) { r.Formula = "\tCHClF2 " }),

	// Length of text fields.
	fire(CodeFieldTooLong, "3 MB formula", func(r *Record) { r.Formula = strings.Repeat("C", 3<<20) }, "declared_formula is 3145728 bytes", "at most 128"),
	fire(CodeFieldTooLong, "65-byte company", func(r *Record) { r.CompanyID = strings.Repeat("C", 65) }, "company_id", "at most 64"),
	silent(CodeFieldTooLong, "128-byte formula", func(r *Record) { r.Formula = strings.Repeat("C", 128) }),
	silent(CodeFieldTooLong, "clean record", nil),

	// Components per composition.
	fire(CodeMixTooMany, "10,000 copies of one component", func(r *Record) {
		r.Substance, r.HSCode, r.CAS, r.Formula = "", "", "", ""
		r.Composition = repeatedShares("HFC-32", 10000, 0.01)
	}, "10000 components", "at most 16"),
	fire(CodeMixTooMany, "17 measured components", func(r *Record) {
		r.Measured = make([]MeasuredShare, 17)
	}, "measured composition lists 17"),
	silent(CodeMixTooMany, "16 components", func(r *Record) {
		r.Substance, r.HSCode, r.CAS, r.Formula = "", "", "", ""
		r.Composition = repeatedShares("HFC-32", 16, 6.25)
	}),

	// Quantities.
	fire(CodeQtyFormat, "leading plus", func(r *Record) { r.TotalQuantity = "+100" }, "carries a sign", "no sign"),
	fire(CodeQtyFormat, "leading plus on the fill", func(r *Record) { r.TotalQuantity, r.FillPerPackage = "", "+13.6" }, "carries a sign"),
	silent(CodeQtyFormat, "plain decimal", func(r *Record) { r.TotalQuantity = "100" }),
	fire(CodeQtyTooSmall, "0.9e-9 kg in one package", func(r *Record) { r.TotalQuantity, r.FillPerPackage, r.PackageCount = "", "0.0000000009", 1 }, "0.0000000009 kg", "0.000000001 kg"),
	fire(CodeQtyTooSmall, "1e-7 g is 1e-10 kg", func(r *Record) { r.TotalQuantity, r.Unit, r.PackageCount = "0.0000001", "g", 0 }),
	silent(CodeQtyTooSmall, "exactly 1e-9 kg", func(r *Record) { r.TotalQuantity, r.PackageCount = "0.000000001", 0 }),
	silent(CodeQtyTooSmall, "1e-10 kg in each of 10 packages", func(r *Record) { r.TotalQuantity, r.FillPerPackage, r.PackageCount = "", "0.0000000001", 10 }),
	silent(CodeQtyTooSmall, "1e-6 g", func(r *Record) { r.TotalQuantity, r.Unit, r.PackageCount = "0.000001", "g", 0 }),

	// Findings per record.
	fire(CodeFindingsCapped, "16 unknown components without shares", func(r *Record) {
		r.TotalQuantity, r.DeclarationDate = "", ""
		r.Composition = repeatedShares("R-9999", 16, 0)
	}, "more findings were left out", "at most 32"),
	silent(CodeFindingsCapped, "clean record", nil),
}

// TestDuplicateComponentsOnce: a substance repeated in a composition gives one finding,
// not one per pair; 10,000 repeats are refused by the component limit with one finding.
func TestDuplicateComponentsOnce(t *testing.T) {
	env := testEnv(t)
	count := func(v Verdict, code string) int {
		n := 0
		for _, f := range v.Findings {
			if f.Code == code {
				n++
			}
		}
		return n
	}
	r := baseRecord()
	r.Substance, r.HSCode, r.CAS, r.Formula = "", "", "", ""
	r.Composition = repeatedShares("HFC-32", 16, 6.25)
	v := Check(env, &r, nil)
	if n := count(v, CodeMixComponentMismatch); n != 1 {
		t.Fatalf("16 copies of HFC-32: %d MIX_COMPONENT_MISMATCH findings, want 1: %v", n, v.Findings)
	}
	if v.Outcome != OutcomeRejected {
		t.Fatalf("outcome %v", v.Outcome)
	}

	r.Composition = repeatedShares("HFC-32", 10000, 0.01)
	v = Check(env, &r, nil)
	if len(v.Findings) != 1 || v.Findings[0].Code != CodeMixTooMany || v.Outcome != OutcomeRejected {
		t.Fatalf("10,000 copies: %v, outcome %v; want one MIX_TOO_MANY, rejected", v.Findings, v.Outcome)
	}
}

// TestFindingsCapped: the cap keeps errors first, counts the rest and does not change the outcome.
func TestFindingsCapped(t *testing.T) {
	env := testEnv(t)
	r := baseRecord()
	r.TotalQuantity, r.DeclarationDate = "", ""
	r.Composition = repeatedShares("R-9999", 16, 0)
	v := Check(env, &r, nil)
	if len(v.Findings) != MaxFindings+1 {
		t.Fatalf("%d findings, want %d", len(v.Findings), MaxFindings+1)
	}
	last := v.Findings[MaxFindings]
	if last.Code != CodeFindingsCapped || last.Severity != SeverityNotice {
		t.Fatalf("last finding %v, want the FINDINGS_CAPPED notice", last)
	}
	for _, f := range v.Findings[:MaxFindings] {
		if f.Severity != SeverityError {
			t.Fatalf("a kept finding is not an error although errors were left out: %v", f)
		}
	}
	if v.Outcome != OutcomeRejected {
		t.Fatalf("outcome %v", v.Outcome)
	}
}

func TestTextProblem(t *testing.T) {
	for _, tc := range []struct {
		in, want string // want: substring of the problem, "" when accepted
	}{
		{"HCFC-22", ""},
		{"chlorodifluorométhane", ""},
		{"XA\u00a0IMP", ""}, // no-break space is visible as a space
		{"a\x00b", "U+0000 (NUL) at byte 2"},
		{"a\x7f", "U+007F"},
		{"\xc3\x28", "not valid UTF-8 (byte 1)"},
		{"K\u200d1", "U+200D"},
		{"K\ufeff", "U+FEFF"},
		{"K\u2066x\u2069", "U+2066"},
		{"K\u2028", "U+2028"},
		{"K\u00ad1", "U+00AD"},
	} {
		got := TextProblem(tc.in)
		if (tc.want == "") != (got == "") || !strings.Contains(got, tc.want) {
			t.Errorf("TextProblem(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
	if Storable("a\x00") || Storable("\xff") || !Storable("a\u202eb") {
		t.Error("Storable: NUL and invalid UTF-8 are not storable; a bidirectional control is")
	}
}

// TestBlendsWithinComponentLimit: the limit never refuses a catalogue blend.
func TestBlendsWithinComponentLimit(t *testing.T) {
	_, blends, err := substances.Seed()
	if err != nil {
		t.Fatal(err)
	}
	if len(blends) == 0 {
		t.Fatal("no blends in the seed catalogue")
	}
	for _, b := range blends {
		if len(b.Components) > MaxComponents {
			t.Errorf("%s has %d components, above MaxComponents %d", b.Designation, len(b.Components), MaxComponents)
		}
	}
}

// TestFieldLimitsFitCatalogue: every catalogue designation, CAS number and formula fits its field.
func TestFieldLimitsFitCatalogue(t *testing.T) {
	subs, _, err := substances.Seed()
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range subs {
		if len(s.Designation) > fieldLimit("substance") || len(s.CAS) > fieldLimit("declared_cas_number") || len(s.Formula) > fieldLimit("declared_formula") {
			t.Errorf("%s: a catalogue identifier is longer than its field limit", s.Designation)
		}
	}
}
