package validate

import (
	"errors"
	"math"
	"math/big"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"

	"github.com/halovet/halovet/terms"
)

func TestToKilogramsExact(t *testing.T) {
	cases := []struct {
		name       string
		qty        string
		unit       Unit
		containers int64
		wantKg     float64
	}{
		// source: international yard and pound agreement (1959): 1 lb = 0.45359237 kg exactly.
		{"one pound", "1", UnitPound, 0, 0.45359237},
		{"100 lb", "100", UnitPound, 0, 45.359237},
		{"30 lb cylinder x 3", "30", UnitPound, 3, 40.8233133}, // 30 x 0.45359237 x 3, exact decimal
		{"metric tonne", "2.5", UnitTonne, 0, 2500},
		{"grams", "250", UnitGram, 0, 0.25},
		{"kg total", "1250.5", UnitKilogram, 0, 1250.5},
		{"13.6 kg cylinders x 10", "13.6", UnitKilogram, 10, 136},
		{"0.1 + 0.2 style", "0.3", UnitKilogram, 0, 0.3},
		{"one container is the fill", "13.6", UnitKilogram, 1, 13.6},
		{"leading dot", ".5", UnitTonne, 0, 500},
		{"negative kept", "-2", UnitKilogram, 0, -2},
		{"zero", "0.000", UnitKilogram, 0, 0},
		{"18 digits in lb, slow path", "123456789012345678", UnitPound, 7, 3.9199e17}, // checked below against math/big
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			d, err := ParseDecimal(c.qty)
			if err != nil {
				t.Fatalf("ParseDecimal(%q): %v", c.qty, err)
			}
			got, err := ToKilograms(d, c.unit, c.containers)
			if err != nil {
				t.Fatalf("ToKilograms: %v", err)
			}
			want := exactKg(t, c.qty, c.unit, c.containers)
			if got != want {
				t.Fatalf("%s %s x %d = %.17g kg, want the nearest float64 to the exact value %.17g", c.qty, c.unit, c.containers, got, want)
			}
			if c.name != "18 digits in lb, slow path" && got != c.wantKg {
				t.Fatalf("%s %s x %d = %.17g kg, want %.17g", c.qty, c.unit, c.containers, got, c.wantKg)
			}
		})
	}
}

// exactKg computes the conversion with exact rational arithmetic and rounds once.
func exactKg(t *testing.T, qty string, u Unit, containers int64) float64 {
	t.Helper()
	r, ok := new(big.Rat).SetString(strings.TrimPrefix(qty, "+"))
	if !ok {
		t.Fatalf("big.Rat cannot read %q", qty)
	}
	factor := map[Unit]string{UnitKilogram: "1", UnitTonne: "1000", UnitGram: "0.001", UnitPound: "0.45359237"}[u]
	f, _ := new(big.Rat).SetString(factor)
	r.Mul(r, f)
	if containers > 1 {
		r.Mul(r, new(big.Rat).SetInt64(containers))
	}
	v, _ := r.Float64()
	return v
}

func TestToKilogramsMatchesRationalArithmetic(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	units := []Unit{UnitKilogram, UnitTonne, UnitGram, UnitPound}
	for i := 0; i < 20000; i++ {
		digits := 1 + rng.IntN(18)
		var b strings.Builder
		for k := 0; k < digits; k++ {
			b.WriteByte(byte('0' + rng.IntN(10)))
		}
		s := b.String()
		if dot := rng.IntN(digits + 1); dot < digits {
			s = s[:dot] + "." + s[dot:]
		}
		u := units[rng.IntN(len(units))]
		containers := int64(0)
		if rng.IntN(2) == 0 {
			containers = int64(rng.IntN(maxContainers))
		}
		d, err := ParseDecimal(s)
		if err != nil {
			t.Fatalf("ParseDecimal(%q): %v", s, err)
		}
		got, err := ToKilograms(d, u, containers)
		if err != nil {
			t.Fatalf("ToKilograms(%q): %v", s, err)
		}
		if want := exactKg(t, s, u, containers); got != want {
			t.Fatalf("%s %s x %d: got %.17g, exact rounding gives %.17g", s, u, containers, got, want)
		}
	}
}

func TestParseDecimalRefusals(t *testing.T) {
	cases := []struct {
		in    string
		want  error
		inMsg string
	}{
		{"1,5", ErrDecimalComma, "use a dot"},
		{"1.250,5", ErrDecimalComma, "use a dot"},
		{"1 250", ErrDecimalSpace, "without spaces"},
		{"1'250", ErrDecimalSpace, "thousands separators"},
		{"1e3", ErrDecimalSyntax, "exponents"},
		{"12kg", ErrDecimalSyntax, "no units"},
		{"1.2.3", ErrDecimalSyntax, "more than one dot"},
		{".", ErrDecimalSyntax, "no digits"},
		{"-", ErrDecimalSyntax, "no digits"},
		{"", ErrDecimalEmpty, "decimal number"},
		{"   ", ErrDecimalEmpty, "decimal number"},
		{"1234567890123456789", ErrDecimalDigits, "18 significant digits"},
		{"NaN", ErrDecimalSyntax, "digits"},
		{"Inf", ErrDecimalSyntax, "digits"},
	}
	for _, c := range cases {
		t.Run(c.in, func(t *testing.T) {
			_, err := ParseDecimal(c.in)
			if !errors.Is(err, c.want) {
				t.Fatalf("ParseDecimal(%q) error = %v, want %v", c.in, err, c.want)
			}
			if !strings.Contains(err.Error(), c.inMsg) {
				t.Fatalf("message %q should say %q", err, c.inMsg)
			}
		})
	}
}

func TestParseDecimalAccepts(t *testing.T) {
	cases := map[string]string{
		"1250":                  "1250",
		"1250.50":               "1250.5",
		" 0.25 ":                "0.25",
		"+7":                    "7",
		"-0":                    "0",
		"000123.4500":           "123.45",
		"0.000001":              "0.000001",
		"123456789012345678":    "123456789012345678",
		"0.123456789012345678":  "0.123456789012345678",
		"5.":                    "5",
		"-3.10":                 "-3.1",
		"100000000000000000000": "", // 21 digits: refused
	}
	for in, want := range cases {
		d, err := ParseDecimal(in)
		if want == "" {
			if err == nil {
				t.Errorf("ParseDecimal(%q) = %v, want an error", in, d)
			}
			continue
		}
		if err != nil {
			t.Errorf("ParseDecimal(%q): %v", in, err)
			continue
		}
		if got := d.String(); got != want {
			t.Errorf("ParseDecimal(%q).String() = %q, want %q", in, got, want)
		}
		f, _ := strconv.ParseFloat(strings.TrimSpace(in), 64)
		if d.Float64() != f {
			t.Errorf("ParseDecimal(%q).Float64() = %v, strconv gives %v", in, d.Float64(), f)
		}
	}
}

func TestToKilogramsRefusals(t *testing.T) {
	d, _ := ParseDecimal("1")
	if _, err := ToKilograms(d, UnitUnspecified, 0); !errors.Is(err, terms.ErrUnknownValue) {
		t.Errorf("unspecified unit: error %v, want terms.ErrUnknownValue", err)
	}
	if _, err := ToKilograms(d, UnitKilogram, -1); !errors.Is(err, ErrContainerCount) {
		t.Errorf("negative containers: error %v, want ErrContainerCount", err)
	}
	if _, err := ToKilograms(d, UnitKilogram, maxContainers+1); !errors.Is(err, ErrContainerCount) {
		t.Errorf("too many containers: error %v, want ErrContainerCount", err)
	}
}

func TestParseUnit(t *testing.T) {
	cases := []struct {
		in   string
		want Unit
		err  error
	}{
		{"kg", UnitKilogram, nil},
		{"KGS", UnitKilogram, nil},
		{" Kilograms ", UnitKilogram, nil},
		{"t", UnitTonne, nil},
		{"Metric Tonnes", UnitTonne, nil},
		{"metric_ton", UnitTonne, nil},
		{"g", UnitGram, nil},
		{"lb", UnitPound, nil},
		{"LBS", UnitPound, nil},
		{"pound", UnitPound, nil},
		{"", UnitUnspecified, nil},
		{"ton", UnitUnspecified, ErrUnitAmbiguous},
		{"MT", UnitUnspecified, ErrUnitAmbiguous},
		{"oz", UnitUnspecified, terms.ErrUnknownValue},
		{"kg/m3", UnitUnspecified, terms.ErrUnknownValue},
	}
	for _, c := range cases {
		got, err := ParseUnit(c.in)
		if got != c.want || !errors.Is(err, c.err) || (c.err == nil) != (err == nil) {
			t.Errorf("ParseUnit(%q) = %v, %v; want %v, %v", c.in, got, err, c.want, c.err)
		}
		if err == nil && c.want != UnitUnspecified {
			if back, _ := ParseUnit(got.String()); back != got {
				t.Errorf("ParseUnit(%q.String()) = %v", got, back)
			}
		}
	}
}

func FuzzParseDecimal(f *testing.F) {
	for _, s := range []string{"1250.5", "1,5", "1 250", "-0.001", ".5", "1e3", "999999999999999999", "", "+", "0x10"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		d, err := ParseDecimal(s)
		if err != nil {
			return
		}
		// A parsed number must write back to a form that parses to the same value.
		back, err := ParseDecimal(d.String())
		if err != nil {
			t.Fatalf("ParseDecimal(%q) = %v, but its String %q does not parse: %v", s, d, d.String(), err)
		}
		if back.String() != d.String() || back.Float64() != d.Float64() {
			t.Fatalf("round trip of %q changed %v to %v", s, d, back)
		}
		want, perr := strconv.ParseFloat(strings.TrimSpace(s), 64)
		if perr == nil && want != d.Float64() {
			t.Fatalf("ParseDecimal(%q).Float64() = %v, strconv gives %v", s, d.Float64(), want)
		}
	})
}

// TestDeclaredQuantityDraws: a declaration states the total net mass and the packages apart.
// "113 kg total in 10 packages" and "11.3 kg per package × 10" both draw 113 kg; HCFC-22 has
// ODP 0.055 (Montreal Protocol Annex C Group I), so each draws 113 × 0.055 / 1000 =
// 0.006215 ODP t on the ODP-tonne line 2 of the INVENTED licence.
func TestDeclaredQuantityDraws(t *testing.T) {
	env := testEnv(t)
	cases := []struct {
		name               string
		total, fill        string
		packages           int64
		wantKg, wantODPt   float64
		rejectWith, fields string
	}{
		{name: "113 kg total in 10 packages", total: "113", packages: 10, wantKg: 113, wantODPt: 0.006215},
		{name: "11.3 kg per package x 10", fill: "11.3", packages: 10, wantKg: 113, wantODPt: 0.006215},
		{name: "both, agreeing", total: "113", fill: "11.3", packages: 10, wantKg: 113, wantODPt: 0.006215},
		{name: "total alone", total: "113", wantKg: 113, wantODPt: 0.006215},
		{name: "both, disagreeing", total: "113", fill: "13.6", packages: 10, rejectWith: CodeQtyTotalFillDisagree},
	}
	for _, c := range cases {
		r := baseRecord()
		r.TotalQuantity, r.FillPerPackage, r.PackageCount = c.total, c.fill, c.packages
		v := Check(env, &r, nil)
		if c.rejectWith != "" {
			f, ok := codesOf(v)[c.rejectWith]
			if v.Outcome != OutcomeRejected || !ok {
				t.Errorf("%s: outcome %v, findings %v; want rejected with %s", c.name, v.Outcome, v.Findings, c.rejectWith)
				continue
			}
			for _, want := range []string{"total_net_quantity 113 kg", "net_fill_per_package 13.6 kg", "package_count 10", "= 136 kg"} {
				if !strings.Contains(f.Message, want) {
					t.Errorf("%s: message %q does not name %q", c.name, f.Message, want)
				}
			}
			if len(v.Draws) != 0 {
				t.Errorf("%s: rejected record draws %v", c.name, v.Draws)
			}
			continue
		}
		if v.Outcome == OutcomeRejected {
			t.Errorf("%s: rejected: %v", c.name, v.Findings)
			continue
		}
		if v.Figures.NetMassKg != c.wantKg {
			t.Errorf("%s: net mass %v kg, want %v", c.name, v.Figures.NetMassKg, c.wantKg)
		}
		if len(v.Draws) != 1 || v.Draws[0].LineNumber != 2 || math.Abs(v.Draws[0].Amount-c.wantODPt) > 1e-12 {
			t.Errorf("%s: draws %+v, want %v ODP t on line 2", c.name, v.Draws, c.wantODPt)
		}
	}
}
