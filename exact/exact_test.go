package exact

import (
	"errors"
	"strconv"
	"testing"
)

func TestParseAndString(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"0.055", "0.055"}, // HCFC-22 ODP, source: Montreal Protocol Annex C Group I
		{"1430", "1430"},   // HFC-134a GWP, source: Montreal Protocol Annex F (IPCC AR4)
		{"102.030", "102.03"},
		{"0", "0"},
		{"-0.000", "0"},
		{"+2.50", "2.5"},
		{".5", "0.5"},
		{"100.", "100"},
	} {
		d, err := Parse(tc.in)
		if err != nil {
			t.Fatalf("Parse(%q): %v", tc.in, err)
		}
		if got := d.String(); got != tc.want {
			t.Errorf("Parse(%q).String() = %q, want %q", tc.in, got, tc.want)
		}
	}
	for _, bad := range []string{"", "1e3", "NaN", "inf", "1,5", "1 000", "--1", "1.2.3", ".", "-"} {
		if _, err := Parse(bad); !errors.Is(err, ErrSyntax) {
			t.Errorf("Parse(%q) = %v, want ErrSyntax", bad, err)
		}
	}
}

// The sums and products that float64 gets wrong come out exact.
func TestArithmeticIsExact(t *testing.T) {
	// 0.1 + 0.2 is 0.30000000000000004 in float64 (common practice).
	if got := MustParse("0.1").Add(MustParse("0.2")).String(); got != "0.3" {
		t.Errorf("0.1+0.2 = %s", got)
	}
	// HFC-134a C2H2F4 with IUPAC conventional atomic weights C 12.011, H 1.008, F 18.998:
	// 102.03 g/mol (source: IUPAC standard atomic weights, abridged/conventional values).
	m := Sum(FromInt(2).Mul(MustParse("12.011")), FromInt(2).Mul(MustParse("1.008")), FromInt(4).Mul(MustParse("18.998")))
	if m.String() != "102.03" {
		t.Errorf("molar mass of C2H2F4 = %s, want 102.03", m)
	}
	// R-404A AR4 GWP: 44 % HFC-125 (3500), 52 % HFC-143a (4470), 4 % HFC-134a (1430) gives
	// 3921.6, listed rounded as 3922 (source: ASHRAE 34 composition, IPCC AR4 values as in
	// Montreal Protocol Annex F).
	g := Sum(FromInt(3500).Percent(FromInt(44)), FromInt(4470).Percent(FromInt(52)), FromInt(1430).Percent(FromInt(4)))
	if g.String() != "3921.6" {
		t.Errorf("R-404A GWP = %s, want 3921.6", g)
	}
	if got := FromInt(1).DivRound(FromInt(3), 6).String(); got != "0.333333" {
		t.Errorf("1/3 to 6 places = %s", got)
	}
	if got := MustParse("2.5").Shift(-3).String(); got != "0.0025" {
		t.Errorf("2.5 kg in t = %s", got)
	}
}

func TestFromFloatRecoversWrittenDecimals(t *testing.T) {
	for _, f := range []float64{0.055, 0.027, 1430, 0.6, 102.03, 0} {
		d, ok := FromFloat(f)
		if !ok {
			t.Fatalf("FromFloat(%v) not ok", f)
		}
		if back := d.Float64(); back != f {
			t.Errorf("FromFloat(%v) = %s reads back as %v", f, d, back)
		}
	}
	a, b := 0.1, 0.2
	if d, _ := FromFloat(a + b); d.String() != "0.30000000000000004" {
		t.Errorf("float noise should stay visible, got %s", d)
	}
}

func TestDisplay(t *testing.T) {
	for _, tc := range []struct {
		d    string
		u    Unit
		want string
	}{
		{"102.03", GPerMol, "102.03"},
		{"0.00055", ODPTonnes, "0.0006"}, // 10 kg HCFC-22 (ODP 0.055), half away from zero
		{"1.5", Kg, "1.5"},
		{"20.875", CO2eTonnes, "20.875"}, // 10 kg R-410A (AR4 2087.5)
		{"20.8754", CO2eTonnes, "20.875"},
		{"0.0000001", ODP, "0.0000001"},
		{"33.3333333", Percent, "33.33"},
		{"0", ODPTonnes, "0"},
	} {
		if got := MustParse(tc.d).Display(tc.u); got != tc.want {
			t.Errorf("Display(%s, %v) = %q, want %q", tc.d, tc.u, got, tc.want)
		}
	}
	if got := MustParse("10").DisplayWith(Kg); got != "10 kg" {
		t.Errorf("DisplayWith = %q", got)
	}
	if got := MustParse("1.5").Fixed(2); got != "1.50" {
		t.Errorf("Fixed = %q", got)
	}
	if got := MustParse("-0.0001").Fixed(2); got != "0.00" {
		t.Errorf("Fixed of a tiny negative = %q", got)
	}
}

func TestWireAndParseField(t *testing.T) {
	if Wire(Zero, true) != "0" || Wire(Zero, false) != "" {
		t.Error("a known zero must be \"0\" and an unknown figure empty")
	}
	if _, ok, err := ParseField("net_mass_kg", " "); ok || err != nil {
		t.Errorf("empty field: ok=%v err=%v", ok, err)
	}
	_, _, err := ParseField("net_mass_kg", "1e3")
	var fe *FieldError
	if !errors.As(err, &fe) || fe.Field != "net_mass_kg" || !errors.Is(err, ErrSyntax) {
		t.Errorf("ParseField error = %v", err)
	}
}

// TestDatabaseAndJSONForms: a figure reads from numeric text and writes as its exact text
// (database/sql), refuses a float8, and travels in JSON as a string, reading a JSON number
// digit for digit (123456789.123456789 has 18 significant digits; a float64 keeps 17 at
// most: common practice).
func TestDatabaseAndJSONForms(t *testing.T) {
	var d Decimal
	if err := d.Scan("123456789.123456789"); err != nil || d.String() != "123456789.123456789" {
		t.Errorf("Scan of numeric text: %v, %v", d, err)
	}
	if err := d.Scan(float64(1.5)); err == nil {
		t.Error("Scan of a float64 succeeded; want it refused")
	}
	if v, err := MustParse("0.055").Value(); err != nil || v != "0.055" {
		t.Errorf("Value = %v, %v; want the text 0.055", v, err)
	}
	b, err := MustParse("123456789.123456789").MarshalJSON()
	if err != nil || string(b) != `"123456789.123456789"` {
		t.Errorf("MarshalJSON = %s, %v", b, err)
	}
	for _, in := range []string{`"123456789.123456789"`, `123456789.123456789`} {
		var x Decimal
		if err := x.UnmarshalJSON([]byte(in)); err != nil || x.String() != "123456789.123456789" {
			t.Errorf("UnmarshalJSON(%s) = %v, %v", in, x, err)
		}
	}
	if err := d.UnmarshalJSON([]byte(`1e3`)); err == nil {
		t.Error("UnmarshalJSON of 1e3 succeeded; want the exponent refused")
	}
	// Billionths, half away from zero (common practice).
	for in, want := range map[string]int64{"0.0040316765": 4031677, "-0.0000000005": -1, "0.0000000004": 0} {
		if n, ok := MustParse(in).Units(-9); !ok || n != want {
			t.Errorf("Units(-9) of %s = %d, %v; want %d", in, n, ok, want)
		}
	}
	if _, ok := MustParse("10000000000").Units(-9); ok {
		t.Error("10^10 in billionths fits an int64; want false (10^19 > 2^63)")
	}
}

// TestFloat64MatchesStrconv: the fast conversion gives the float64 strconv parses from the
// same decimal text (correct rounding, common practice), and allocates nothing.
func TestFloat64MatchesStrconv(t *testing.T) {
	for _, s := range []string{"0", "0.4", "0.055", "1430", "-2.5", "123456789.123456789", "0.000000001", "999999999999999", "0.0040316765", "1e2"[:1]} {
		d := MustParse(s)
		want, _ := strconv.ParseFloat(d.String(), 64)
		if got := d.Float64(); got != want {
			t.Errorf("Float64(%s) = %v, want %v", s, got, want)
		}
	}
	d := MustParse("0.4")
	if n := testing.AllocsPerRun(100, func() { _ = d.Float64() }); n != 0 {
		t.Errorf("Float64 of 0.4 allocates %v times; want 0", n)
	}
}
