package validate

import (
	"math"
	"testing"

	"github.com/halovet/halovet/exact"
)

// TestPlanDrawsExactRoundsTheExactSum: 4.0316765 kg of HCFC-141b (an invented import) on
// the invented licence's metric-t line draws 4.0316765 / 1000 = 0.0040316765 t exactly (by
// hand), which rounds half away from zero to 0.004031677 t at the register's billionths.
// The float draw is 0.0040316764999999994 t and rounds to 0.004031676 t: one billionth
// short.
func TestPlanDrawsExactRoundsTheExactSum(t *testing.T) {
	env := testEnv(t)
	lic, _ := env.Licence("XA-IMP-2025-001")
	r := baseRecord()
	r.Substance, r.HSCode, r.CAS, r.Formula = "HCFC-141b", "", "", ""
	r.PackageCount = 0
	r.TotalQuantity = "4.0316765"
	v := Check(env, &r, DeferQuota)
	if len(v.Draws) != 1 || v.Draws[0].LineNumber != 3 {
		t.Fatalf("draws %+v (findings %+v); want one on line 3 (HCFC-141b, metric t)", v.Draws, v.Findings)
	}
	ex := PlanDrawsExact(lic, &v.Figures, r.Purpose)
	if len(ex) != 1 || ex[0].LineNumber != 3 || !ex[0].Amount.Equal(exact.MustParse("0.0040316765")) {
		t.Fatalf("exact draws %+v; want line 3 drawing 0.0040316765 t", ex)
	}
	n, ok := ex[0].Amount.Units(-9)
	if !ok || n != 4031677 {
		t.Errorf("exact draw in billionths %d (%v); want 4031677 (half a billionth rounds away from zero)", n, ok)
	}
	// The case is one the float path got wrong (as ledger rounded it before, math.Round).
	if f := int64(math.Round(v.Draws[0].Amount * 1e9)); f != 4031676 {
		t.Errorf("float draw in billionths %d; want 4031676, the float error this case is chosen for", f)
	}
}
