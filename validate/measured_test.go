package validate

import (
	"testing"

	"github.com/halovet/halovet/substances"
)

// The base record declares 10 cylinders of 13.6 kg HCFC-22 (136 kg).
func init() { ruleCases = append(ruleCases, measuredCases...) }

func r407C(r *Record) {
	// R-407C is HFC-32/125/134a 23/25/52 ±2 each (ANSI/ASHRAE Standard 34-2019); the HS code
	// is left out, so that only the measurement is judged.
	r.Substance, r.HSCode, r.CAS, r.Formula = "R-407C", "", "", ""
}

var measuredCases = []ruleCase{
	fire(CodeMeasuredUnreadable, "sum far from 100", func(r *Record) { r.Measured = []MeasuredShare{{"R-22", 80, 0}} }, "shares", "sum to 80 %"),
	fire(CodeMeasuredUnreadable, "unknown component", func(r *Record) {
		r.Measured = []MeasuredShare{{"R-22", 50, 0}, {"unobtainium", 50, 0}}
	}, "share 2 identifier", "unobtainium"),
	fire(CodeMeasuredUnreadable, "negative share", func(r *Record) {
		r.Measured = []MeasuredShare{{"R-22", 101, 0}, {"R-32", -1, 0}}
	}, "share 1 mass percent"),
	fire(CodeMeasuredUnreadable, "only air", func(r *Record) { r.Measured = []MeasuredShare{{"air", 100, 0}} }, "only non-condensables"),
	fire(CodeMeasuredUnreadable, "duplicate", func(r *Record) {
		r.Measured = []MeasuredShare{{"R-22", 50, 0}, {"HCFC-22", 50, 0}}
	}, "share 2 identifier", "already given"),
	silent(CodeMeasuredUnreadable, "pure HCFC-22", func(r *Record) { r.Measured = []MeasuredShare{{"R-22", 100, 0}} }),

	// 100 % CFC-12 declared as HCFC-22 (the base record): CFC-12 is Annex A Group I with
	// ODP 1.0 (Montreal Protocol Annex A); 136 kg → 0.136 ODP t.
	fire(CodeMeasuredContradicts, "CFC-12 in an HCFC-22 cylinder", func(r *Record) {
		r.Measured = []MeasuredShare{{"CFC-12", 100, 0.5}}
	}, "does not fit the declared HCFC-22", "fits CFC-12", "HCFC-22 measured 0 %"),
	fire(CodeMeasuredContradicts, "CFC-12 declared as HFC-134a", func(r *Record) {
		hfc134a(r)
		r.Measured = []MeasuredShare{{"CFC-12", 100, 0}}
	}, "does not fit the declared HFC-134a", "fits CFC-12"),
	silent(CodeMeasuredContradicts, "HCFC-22 with 0.5 % air", func(r *Record) {
		r.Measured = []MeasuredShare{{"R-22", 99.5, 0.5}, {"air", 0.5, 0}}
	}),
	fire(CodeMeasuredHiddenControlled, "CFC-12 in an HCFC-22 cylinder", func(r *Record) {
		r.Measured = []MeasuredShare{{"CFC-12", 100, 0.5}}
	}, "CFC-12, Annex A/I (CFCs)", "0.136 ODP t", "GWP of 10900 would make 1482.4 t CO2-eq"), // GWP 10900: IPCC AR4 WG1 Table 2.14, listed in Annex A
	// CFC-12 sold as HFC-134a: 12 kg (hfc134a sets one 12 kg cylinder) × ODP 1.0 → 0.012 ODP t.
	fire(CodeMeasuredHiddenControlled, "CFC-12 declared as HFC-134a", func(r *Record) {
		hfc134a(r)
		r.Measured = []MeasuredShare{{"CFC-12", 100, 0}}
	}, "CFC-12, Annex A/I (CFCs)", "0.012 ODP t"),
	// HCFC-22 with 5 % air declared as R-407C: HCFC-22 is Annex C Group I, ODP 0.055
	// (Montreal Protocol Annex C); 136 kg of refrigerant → 0.00748 ODP t.
	fire(CodeMeasuredHiddenControlled, "HCFC-22 with 5 % air declared as R-407C", func(r *Record) {
		r407C(r)
		r.Measured = []MeasuredShare{{"R-22", 95, 0}, {"air", 5, 0}}
	}, "HCFC-22, Annex C/I (HCFCs)", "declared R-407C does not contain it", "0.00748 ODP t"),
	// HFC-134a hidden in a declared R-22 cylinder: HFC-134a GWP 1430 (IPCC AR4, Montreal
	// Protocol Annex F); 50 % of 136 kg = 0.068 t → 97.24 CO2-eq t.
	fire(CodeMeasuredHiddenControlled, "HFC-134a half of an HCFC-22 cylinder", func(r *Record) {
		r.Measured = []MeasuredShare{{"R-22", 50, 0}, {"R-134a", 50, 0}}
	}, "HFC-134a, Annex F/I (HFCs)", "97.24 CO2-eq t"),
	silent(CodeMeasuredHiddenControlled, "R-407C as declared", func(r *Record) {
		r407C(r)
		r.Measured = []MeasuredShare{{"HFC-32", 23.5, 0}, {"HFC-125", 24.5, 0}, {"HFC-134a", 52, 0}}
	}),
	fire(CodeMeasuredNonCondensables, "5 % air", func(r *Record) {
		r.Measured = []MeasuredShare{{"R-22", 95, 0}, {"air", 5, 0}}
	}, "5 % non-condensables"),
	silent(CodeMeasuredNonCondensables, "1 % air", func(r *Record) { r.Measured = []MeasuredShare{{"R-22", 99, 0}, {"air", 1, 0}} }),
	fire(CodeMeasuredConfirms, "pure HCFC-22", func(r *Record) { r.Measured = []MeasuredShare{{"R-22", 100, 0}} }, "declared HCFC-22", "fits HCFC-22"),
	fire(CodeMeasuredConfirms, "R-407C inside its tolerance", func(r *Record) {
		r407C(r)
		r.Measured = []MeasuredShare{{"HFC-32", 24.5, 0}, {"HFC-125", 23.5, 0}, {"HFC-134a", 52, 0}}
	}, "declared R-407C", "fits R-407C"),
	silent(CodeMeasuredConfirms, "R-407C read as HCFC-22", func(r *Record) {
		r407C(r)
		r.Measured = []MeasuredShare{{"R-22", 95, 0}, {"air", 5, 0}}
	}),
	silent(CodeMeasuredConfirms, "no reading", func(r *Record) {}),
	fire(CodeMeasuredNotCompared, "only a declared composition", func(r *Record) {
		r.Substance, r.HSCode, r.CAS, r.Formula = "", "", "", ""
		r.Composition = []DeclaredShare{{"HFC-134a", 50}, {"HCFC-22", 50}}
		r.Measured = []MeasuredShare{{"HFC-134a", 50, 0}, {"HCFC-22", 50, 0}}
	}, "not compared", "no standard blend fits", "HFC-134a 50 %", "HCFC-22 50 %"),
	silent(CodeMeasuredNotCompared, "declared HCFC-22", func(r *Record) { r.Measured = []MeasuredShare{{"R-22", 100, 0}} }),
}

// The verdict carries the comparison.
func TestVerdictCarriesMeasurement(t *testing.T) {
	env := testEnv(t)
	r := baseRecord()
	r.Measured = []MeasuredShare{{"CFC-12", 100, 0}}
	v := Check(env, &r, NewMemoryLedger())
	if v.Outcome != OutcomeRejected {
		t.Errorf("outcome %v; a reading that contradicts the declaration rejects", v.Outcome)
	}
	m := v.Measurement
	if m == nil || m.Declared == nil || m.Declared.Designation != "HCFC-22" || m.DeclaredFits || m.Matches[0].Designation != "CFC-12" {
		t.Fatalf("measurement %+v; want CFC-12 first, HCFC-22 refuted", m)
	}
	if m.State != substances.ReadingStandard {
		t.Errorf("state %v, want standard (a mislabelled cylinder)", m.State)
	}
	base := baseRecord()
	if Fingerprint(&r) == Fingerprint(&base) {
		t.Error("a record with a reading fingerprints like one without")
	}
	if Check(env, &base, NewMemoryLedger()).Measurement != nil {
		t.Error("a record without a reading has a measurement")
	}
}

func TestParseMeasured(t *testing.T) {
	got, err := ParseMeasured(" HCFC-22 = 94.5 ± 0.5 ; air=5% ; R-32=0.5+-0.2 ;")
	want := []MeasuredShare{{"HCFC-22", 94.5, 0.5}, {"air", 5, 0}, {"R-32", 0.5, 0.2}}
	if err != nil || len(got) != len(want) {
		t.Fatalf("ParseMeasured = %v, %v", got, err)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("share %d = %+v, want %+v", i, got[i], want[i])
		}
	}
	if s := FormatMeasured(got); s != "HCFC-22=94.5±0.5;air=5;R-32=0.5±0.2" {
		t.Errorf("FormatMeasured = %q", s)
	}
	for _, bad := range []string{"HCFC-22", "=50", "R-22=fifty", "R-22=50±x", "R-22=1,5"} {
		if _, err := ParseMeasured(bad); err == nil {
			t.Errorf("ParseMeasured(%q) should fail", bad)
		}
	}
}
