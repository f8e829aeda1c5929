package controls

import (
	"testing"

	"github.com/halovet/halovet/exact"
)

// TestAssessWithOverrides: exemptions added to the limit, official limits and baselines
// taking precedence over computed ones, both reported. Records and the Party are INVENTED;
// the exemption and the official figures are invented too, with invented source texts.
// Rules: non-A5 methyl bromide level 0 from 2005 (Art. 2H para 5), critical uses authorised
// per Party and year above it (Art. 2H para 5; Decision IX/6); non-A5 HCFC 2015 step 10 %
// (Art. 2F para 3); the history's computed HCFC baseline 197.5 ODP t (history_test.go).
func TestAssessWithOverrides(t *testing.T) {
	rb := mustRulebook(t)
	// 5 t of methyl bromide imported for an authorised critical use: 5 × 0.6 = 3.0 ODP t.
	mb := []Record{rec(2025, mbr, Flows{Imports: num("5")})}
	cue := func(amount exact.Decimal) Overrides {
		return Overrides{Exemptions: map[int][]Exemption{2025: {{Use: UseCritical, Amount: amount, Source: "invented decision XA/1"}}}}
	}
	tests := []struct {
		name                              string
		records                           []Record
		scope                             Scope
		year                              int
		ov                                Overrides
		wantComputed, wantAllowed, wantHr float64
		wantOutcome                       Outcome
	}{
		// No exemption: 3.0 against 0 → exceeded by 3.0.
		{"critical use without exemption", mb, ScopeEI, 2025, Overrides{}, 0, 0, -3.0, Exceeded},
		// Authorised 3.0 ODP t (= 5 t): allowed 0 + 3.0; headroom 0: within.
		{"critical use within its exemption", mb, ScopeEI, 2025, cue(num("3.0")), 0, 3.0, 0, Within},
		// Authorised 2.4 ODP t (= 4 t): 3.0 − 2.4 → exceeded by 0.6.
		{"critical use above its exemption", mb, ScopeEI, 2025, cue(num("2.4")), 0, 2.4, -0.6, Exceeded},
		// HCFC 2015: computed 10 % × 197.5 = 19.75; an agreed plan's limit of 15 is used
		// instead; consumption 17.6 → headroom −2.6: exceeded (within the treaty's level).
		{"official limit stricter than the schedule", nonA5History(), ScopeCI, 2015,
			Overrides{Limits: map[int]OfficialFigure{2015: {num("15"), "invented agreed plan"}}}, 19.75, 15, -2.6, Exceeded},
		// Official baseline 150 ODP t replaces the computed 197.5: 10 % × 150 = 15; headroom −2.6.
		{"official baseline", nonA5History(), ScopeCI, 2015,
			Overrides{Baseline: &OfficialFigure{num("150"), "invented decision XA/2"}}, 15, 15, -2.6, Exceeded},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			a, err := rb.AssessWith(tc.records, partyNonA5, tc.scope, tc.year, tc.year, tc.ov)
			if err != nil {
				t.Fatal(err)
			}
			y := a.Years[0]
			near(t, "computed allowed", y.ComputedAllowed, tc.wantComputed, tolODP)
			near(t, "allowed", y.Allowed, tc.wantAllowed, tolODP)
			near(t, "headroom", y.Headroom, tc.wantHr, tolODP)
			if y.Outcome != tc.wantOutcome {
				t.Errorf("outcome %v, want %v (%q)", y.Outcome, tc.wantOutcome, y.Notes)
			}
			if tc.ov.Baseline != nil && (a.OfficialBaseline == nil || !hasNote(y.Notes, "baseline as officially set")) {
				t.Errorf("the official baseline is not reported: %+v %q", a.OfficialBaseline, y.Notes)
			}
			if len(tc.ov.Exemptions) > 0 && !hasNote(y.Notes, "invented decision XA/1") {
				t.Errorf("the exemption's source is not named: %q", y.Notes)
			}
		})
	}
}
