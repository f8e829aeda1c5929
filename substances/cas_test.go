package substances

import (
	"errors"
	"regexp"
	"strings"
	"testing"
)

func TestParseCASValid(t *testing.T) {
	tests := []struct {
		name, in, want string
	}{
		// source: CAS numbers of testdata/reference/halocarbons.csv (water 7732-18-5 from memory);
		// check digits by the CAS method (CAS, "Check Digit Verification of CAS Registry Numbers")
		{"HCFC-22", "75-45-6", "75-45-6"},
		{"HFC-134a", "811-97-2", "811-97-2"},
		{"carbon tetrachloride", "56-23-5", "56-23-5"},
		{"methyl bromide", "74-83-9", "74-83-9"},
		{"methyl chloroform", "71-55-6", "71-55-6"},
		{"HFC-23", "75-46-7", "75-46-7"},
		{"CFC-11", "75-69-4", "75-69-4"},
		{"water", "7732-18-5", "7732-18-5"},
		// source: worked example of the CAS check-digit method (7*1 + 0*2 + 7*3 + 0*4 + 1*5 = 33 -> 3)
		{"worked example", "107-07-3", "107-07-3"},
		// source: testdata/reference/halocarbons.csv cas column
		{"HFO-1234ze(E), 5-digit first part", "29118-24-9", "29118-24-9"},
		{"HFC-43-10mee, 6-digit first part", "138495-42-8", "138495-42-8"},
		// normalization: common practice for pasted and zero-padded numbers
		{"surrounding space", "  75-45-6\t", "75-45-6"},
		{"no hyphens", "75456", "75-45-6"},
		{"no hyphens, long", "811972", "811-97-2"},
		{"zero padded", "0000075-45-6", "75-45-6"},
		{"zero padded without hyphens", "0000075456", "75-45-6"},
		{"en dashes", "75–45–6", "75-45-6"},
		{"non-breaking hyphens", "75‑45‑6", "75-45-6"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := ParseCAS(tc.in)
			if err != nil {
				t.Fatalf("ParseCAS(%q): unexpected error %v", tc.in, err)
			}
			if got != tc.want {
				t.Errorf("ParseCAS(%q) = %q, want %q", tc.in, got, tc.want)
			}
		})
	}
}

func TestParseCASCheckDigit(t *testing.T) {
	tests := []struct {
		name, in  string
		got, want int
	}{
		// source: the HCFC-22 and HFC-134a CAS numbers (testdata/reference/halocarbons.csv) with the last digit altered; Want from the CAS method
		{"HCFC-22 off by one", "75-45-5", 5, 6},
		{"HFC-134a off by one", "811-97-3", 3, 2},
		{"transposed body", "57-45-6", 6, 4},
		{"no hyphens", "75450", 0, 6},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ParseCAS(tc.in)
			var ce *CASCheckError
			if !errors.As(err, &ce) {
				t.Fatalf("ParseCAS(%q) error = %v, want a *CASCheckError", tc.in, err)
			}
			if ce.Got != tc.got || ce.Want != tc.want {
				t.Errorf("CASCheckError{Got: %d, Want: %d}, want {Got: %d, Want: %d}", ce.Got, ce.Want, tc.got, tc.want)
			}
			if errors.Is(err, ErrCASFormat) {
				t.Errorf("a wrong check digit is not a format error: %v", err)
			}
			if !strings.Contains(err.Error(), "check digit") {
				t.Errorf("message %q should name the check digit", err)
			}
		})
	}
}

func TestParseCASFormat(t *testing.T) {
	tests := []struct{ name, in string }{
		{"empty", ""},
		{"blank", "   "},
		{"two parts", "75-45"},
		{"four parts", "75-45-6-1"},
		{"first part one digit", "7-45-6"},
		{"first part eight digits", "12345678-45-6"},
		{"middle part one digit", "75-4-6"},
		{"middle part three digits", "75-456-6"},
		{"check part two digits", "75-45-66"},
		{"letter", "75-45-x"},
		{"prefix text", "CAS 75-45-6"},
		{"double hyphen", "75--45-6"},
		{"spaces inside", "75 45 6"},
		{"too short without hyphens", "7545"},
		{"too long without hyphens", "1234567890123"},
		{"only zeros in first part", "00-45-6"},
		{"sign", "+75-45-6"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := ParseCAS(tc.in)
			if !errors.Is(err, ErrCASFormat) {
				t.Fatalf("ParseCAS(%q) = %q, %v; want an error wrapping ErrCASFormat", tc.in, got, err)
			}
			if !strings.Contains(err.Error(), "2-7 digits, a hyphen, 2 digits") {
				t.Errorf("message %q should state the expected form", err)
			}
		})
	}
}

func TestCASCheckDigit(t *testing.T) {
	tests := []struct {
		name, body string
		want       int
	}{
		// source: worked example of the CAS check-digit method
		{"worked example", "107-07", 3},
		// source: testdata/reference/halocarbons.csv cas column (75-45-6, 811-97-2)
		{"HCFC-22 with hyphen", "75-45", 6},
		{"HCFC-22 without hyphen", "7545", 6},
		{"HFC-134a", "81197", 2},
		// source: halocarbons.csv (HFC-43-10mee 138495-42-8), nine digits
		{"longest body", "13849542", 8},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := CASCheckDigit(tc.body)
			if err != nil || got != tc.want {
				t.Errorf("CASCheckDigit(%q) = %d, %v; want %d", tc.body, got, err, tc.want)
			}
		})
	}
	for _, bad := range []string{"", "123", "12a4", "1234567890", "--"} {
		if d, err := CASCheckDigit(bad); !errors.Is(err, ErrCASFormat) {
			t.Errorf("CASCheckDigit(%q) = %d, %v; want an ErrCASFormat error", bad, d, err)
		}
	}
}

// TestCASAgainstReference checks every CAS number of the reference table (source:
// halocarbons.csv cas column; the check digit was not verified there for all rows).
func TestCASAgainstReference(t *testing.T) {
	n := 0
	for _, row := range codecReferenceRows(t) {
		if row["cas"] == "" {
			continue // isomer groups carry no CAS number
		}
		n++
		if got, err := ParseCAS(row["cas"]); err != nil || got != row["cas"] {
			t.Errorf("%s: ParseCAS(%q) = %q, %v", row["designation"], row["cas"], got, err)
		}
	}
	if n < 50 {
		t.Errorf("only %d CAS numbers in the reference table, expected more than 50", n)
	}
}

var casForm = regexp.MustCompile(`^[1-9][0-9]{1,6}-[0-9]{2}-[0-9]$`)

func FuzzParseCAS(f *testing.F) {
	for _, s := range []string{"75-45-6", "811-97-2", "75456", "0000075-45-6", "75-45-5", "7-45-6", "75–45–6", "", "-", "--", "0-00-0", "9999999-99-9"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		got, err := ParseCAS(s)
		if err != nil {
			var ce *CASCheckError
			if !errors.Is(err, ErrCASFormat) && !errors.As(err, &ce) {
				t.Fatalf("ParseCAS(%q): error %v is neither ErrCASFormat nor *CASCheckError", s, err)
			}
			return
		}
		if !casForm.MatchString(got) {
			t.Fatalf("ParseCAS(%q) = %q, not in normal form", s, got)
		}
		again, err := ParseCAS(got)
		if err != nil || again != got {
			t.Fatalf("ParseCAS(%q) = %q does not re-parse to itself: %q, %v", s, got, again, err)
		}
		digits := strings.ReplaceAll(got, "-", "")
		want, err := CASCheckDigit(digits[:len(digits)-1])
		if err != nil || int(digits[len(digits)-1]-'0') != want {
			t.Fatalf("ParseCAS(%q) accepted %q with a wrong check digit", s, got)
		}
	})
}

func BenchmarkParseCAS(b *testing.B) {
	b.ReportAllocs()
	for b.Loop() {
		if _, err := ParseCAS("811-97-2"); err != nil {
			b.Fatal(err)
		}
	}
}
