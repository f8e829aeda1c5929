package validate

import (
	"math"
	"strings"
	"testing"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// scopeEnv is testEnv with two INVENTED licences of company CO-1: XA-CU-2025-011 holds a
// critical-use allowance for methyl bromide (line 1, 0.5 t, critical use only) beside a methyl
// bromide line for any purpose (line 2, 100 t); XA-F-2025-012 holds one line for Annex F as a
// whole (line 1, 1000 CO2-eq t) and an HFC-134a line (line 2, 1 t).
func scopeEnv(t *testing.T) *Env {
	t.Helper()
	env := testEnv(t)
	lics := testLicences()
	from, to := d("2025-01-01"), d("2025-12-31")
	imp := []terms.Direction{terms.DirectionImport}
	lics["XA-CU-2025-011"] = &Licence{Number: "XA-CU-2025-011", CompanyID: "CO-1", Directions: imp, ValidFrom: from, ValidTo: to, Status: terms.LicenceActive,
		QuotaLines: []QuotaLine{
			{LineNumber: 2, Group: substances.GroupEI, Unit: terms.QuotaMetricTonnes, Allocated: 100},
			{LineNumber: 1, Group: substances.GroupEI, Purposes: []terms.Purpose{terms.PurposeCriticalUse}, Unit: terms.QuotaMetricTonnes, Allocated: 0.5},
		}}
	lics["XA-F-2025-012"] = &Licence{Number: "XA-F-2025-012", CompanyID: "CO-1", Directions: imp, ValidFrom: from, ValidTo: to, Status: terms.LicenceActive,
		QuotaLines: []QuotaLine{
			{LineNumber: 1, Annex: WholeAnnexF, Unit: terms.QuotaCO2eTonnes, Allocated: 1000},
			{LineNumber: 2, Substance: "HFC-134a", Unit: terms.QuotaMetricTonnes, Allocated: 1},
		}}
	env.Licence = func(n string) (*Licence, bool) { l, ok := lics[n]; return l, ok }
	return env
}

func drawsOf(v Verdict) map[int]float64 {
	m := map[int]float64{}
	for _, d := range v.Draws {
		m[d.LineNumber] += d.Amount
	}
	return m
}

// A critical use of methyl bromide draws on the licence's critical-use allowance, and the
// allowance is what authorises it (Article 2H para 5; Decision IX/6: critical uses exist as the
// Parties authorise them); another purpose never draws on the allowance.
func TestQuotaAllowanceForCriticalUse(t *testing.T) {
	env := scopeEnv(t)
	mbr := func(kg string, p terms.Purpose) Record {
		r := baseRecord()
		methylBromide(&r)
		r.LicenceNumber, r.TotalQuantity, r.Purpose = "XA-CU-2025-011", kg, p
		return r
	}
	r := mbr("400", terms.PurposeCriticalUse)
	v := Check(env, &r, NewMemoryLedger())
	if v.Outcome == OutcomeRejected {
		t.Fatalf("critical use within the allowance rejected: %v", v.Findings)
	}
	if _, ok := codesOf(v)[CodeExemptUseUnauthorised]; ok {
		t.Errorf("the allowance line authorises critical use; got %v", v.Findings)
	}
	// 400 kg = 0.4 t on the allowance line 1 (metric tonnes; common practice: 1 t = 1000 kg).
	if got := drawsOf(v); len(got) != 1 || math.Abs(got[1]-0.4) > 1e-12 {
		t.Errorf("draws %v; want 0.4 t on line 1 only", got)
	}

	// 600 kg exceeds the 0.5 t allowance and does not spill over onto line 2.
	r = mbr("600", terms.PurposeCriticalUse)
	v = Check(env, &r, NewMemoryLedger())
	f, ok := codesOf(v)[CodeQuotaExceeded]
	if !ok || v.Outcome != OutcomeRejected {
		t.Fatalf("600 kg on a 0.5 t allowance: outcome %v, findings %v; want %s", v.Outcome, v.Findings, CodeQuotaExceeded)
	}
	if !strings.Contains(f.Message, "quota line 1 (Annex E/I for critical-use)") {
		t.Errorf("message %q should name the allowance line and its purpose", f.Message)
	}

	// QPS methyl bromide draws on line 2, never on the allowance.
	r = mbr("400", terms.PurposeQPS)
	v = Check(env, &r, NewMemoryLedger())
	if got := drawsOf(v); len(got) != 1 || math.Abs(got[2]-0.4) > 1e-12 {
		t.Errorf("a QPS shipment drew %v (findings %v); want 0.4 t on line 2, nothing on the allowance", got, v.Findings)
	}

	// Without an allowance or a listed purpose the same critical use is unauthorised.
	r = mbr("400", terms.PurposeCriticalUse)
	r.LicenceNumber = "XA-FEED-2025-005"
	if _, ok := codesOf(Check(env, &r, NewMemoryLedger()))[CodeExemptUseUnauthorised]; !ok {
		t.Errorf("critical use on a licence without an allowance should be %s", CodeExemptUseUnauthorised)
	}
}

// A line for Annex F as a whole draws every HFC of either group in CO2-eq tonnes with the
// Protocol's GWPs, and a substance line wins over it.
func TestQuotaLineForWholeAnnexF(t *testing.T) {
	env := scopeEnv(t)
	rec := func(subst, hs, kg string) Record {
		r := baseRecord()
		r.Substance, r.HSCode, r.CAS, r.Formula = subst, hs, "", ""
		r.LicenceNumber, r.TotalQuantity, r.PackageCount = "XA-F-2025-012", kg, 0
		return r
	}
	// HFC-23 (Annex F Group II, GWP 14800: Montreal Protocol Annex F) 10 kg = 148 CO2-eq t.
	r := rec("HFC-23", "", "10")
	v := Check(env, &r, NewMemoryLedger())
	if got := drawsOf(v); math.Abs(got[1]-148) > 1e-9 {
		t.Errorf("HFC-23 draws %v (findings %v); want 148 CO2-eq t on the Annex F line", got, v.Findings)
	}
	// HFC-125 (Annex F Group I, GWP 3500: Montreal Protocol Annex F) 100 kg = 350 CO2-eq t.
	r = rec("HFC-125", "2903.44", "100") // WCO HS 2022 2903.44 (pentafluoroethane)
	v = Check(env, &r, NewMemoryLedger())
	if got := drawsOf(v); math.Abs(got[1]-350) > 1e-9 {
		t.Errorf("HFC-125 draws %v (findings %v); want 350 CO2-eq t on the Annex F line", got, v.Findings)
	}
	// HFC-134a has a substance line of its own: 200 kg = 0.2 t on line 2.
	r = rec("HFC-134a", "2903.45", "200")
	v = Check(env, &r, NewMemoryLedger())
	if got := drawsOf(v); len(got) != 1 || math.Abs(got[2]-0.2) > 1e-12 {
		t.Errorf("HFC-134a draws %v; want 0.2 t on its substance line 2", got)
	}
	// HCFC-22 is not in Annex F: no line covers it.
	r = rec("HCFC-22", "2903.71", "100")
	if _, ok := codesOf(Check(env, &r, NewMemoryLedger()))[CodeLicenceScope]; !ok {
		t.Errorf("HCFC-22 on an Annex F licence should be %s", CodeLicenceScope)
	}
}
