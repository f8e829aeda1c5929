package validate

import (
	"math"
	"testing"

	"github.com/halovet/halovet/terms"
)

// TestHSAcceptance runs whole records through Check: the outcome, not only the finding, is
// what a customs officer relies on. Quantities are the base record's; the expected figures are
// derived from the net mass the checker reports.
func TestHSAcceptance(t *testing.T) {
	env := testEnv(t)
	for _, tc := range []struct {
		name    string
		edit    func(*Record)
		outcome Outcome
		code    string // a finding that must be present ("" for none required)
	}{
		// R-410A is HFC-32/HFC-125 50/50 (ASHRAE 34); 2903.42 is HFC-32 alone (HS 2022 heading 29.03).
		{"R-410A under 2903.42 is rejected", func(r *Record) {
			r.Substance, r.HSCode, r.CAS, r.Formula, r.LicenceNumber = "R-410A", "2903.42", "", "", "XA-IMP-2025-008"
		}, OutcomeRejected, CodeHSKind},
		{"R-410A under 3827.63 is accepted", func(r *Record) {
			r.Substance, r.HSCode, r.CAS, r.Formula, r.LicenceNumber = "R-410A", "3827.63", "", "", "XA-IMP-2025-008"
		}, OutcomeAccepted, ""},
		// Propane, CAS 74-98-6 (IPCC AR6 7.SM.7), HS 2022 2711.12 (Chapter 27 Note 1(a)).
		{"R-290 under 2711.12 is accepted", func(r *Record) {
			r.Substance, r.HSCode, r.CAS, r.Formula = "R-290", "2711.12", "74-98-6", "C3H8"
		}, OutcomeAccepted, CodeSubstNotControlled},
		// Methyl bromide 98 % / chloropicrin 2 % (common practice) for QPS (Art. 2H para 6),
		// HS 2022 3827.40 "containing methyl bromide", on a licence that allows QPS.
		{"methyl bromide 98 % / chloropicrin 2 % for QPS is accepted", func(r *Record) {
			r.Substance, r.HSCode, r.CAS, r.Formula = "MBr/Pic 98/2", "3827.40", "", ""
			r.LicenceNumber, r.Purpose = "XA-FEED-2025-005", terms.PurposeQPS
		}, OutcomeAccepted, ""},
		{"the fumigant mixture under methyl bromide's own 2903.61 is rejected", func(r *Record) {
			r.Substance, r.HSCode, r.CAS, r.Formula = "methyl bromide/chloropicrin 98/2", "2903.61", "", ""
			r.LicenceNumber, r.Purpose = "XA-FEED-2025-005", terms.PurposeQPS
		}, OutcomeRejected, CodeHSKind},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r := baseRecord()
			tc.edit(&r)
			v := Check(env, &r, NewMemoryLedger())
			if v.Outcome != tc.outcome {
				t.Fatalf("outcome %v, want %v; findings %v", v.Outcome, tc.outcome, v.Findings)
			}
			if tc.code != "" {
				if _, ok := codesOf(v)[tc.code]; !ok {
					t.Errorf("no %s finding in %v", tc.code, v.Findings)
				}
			}
		})
	}
}

// TestFumigantCountsOnlyMethylBromide: the 98/2 mixture counts 98 % of its net mass as methyl
// bromide (Annex E, ODP 0.6); chloropicrin counts nothing.
func TestFumigantCountsOnlyMethylBromide(t *testing.T) {
	env := testEnv(t)
	r := baseRecord()
	r.Substance, r.HSCode, r.CAS, r.Formula = "methyl bromide/chloropicrin 98/2", "3827.40", "", ""
	r.LicenceNumber, r.Purpose = "XA-FEED-2025-005", terms.PurposeQPS
	v := Check(env, &r, NewMemoryLedger())
	fig := v.Figures
	if !v.Resolved || fig.NetMassKg <= 0 {
		t.Fatalf("not resolved: %+v %v", fig, v.Findings)
	}
	want := fig.NetMassKg / 1000 * 0.98 * 0.6
	if math.Abs(fig.ODPTonnes-want) > 1e-12 {
		t.Errorf("ODP t %g for %g kg, want %g (98 %% methyl bromide × ODP 0.6)", fig.ODPTonnes, fig.NetMassKg, want)
	}
}
