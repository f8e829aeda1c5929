package controls

import (
	"errors"
	"slices"
	"strings"
	"testing"

	"github.com/halovet/halovet/terms"
)

func hasNote(notes []string, sub string) bool {
	return slices.ContainsFunc(notes, func(n string) bool { return strings.Contains(n, sub) })
}

// TestAssessYears compares consumption with the allowed level, one year per case.
// Consumption and baselines: history_test.go (worked example, invented data).
// Percentages: the control measures of the Montreal Protocol, the article cited per case.
func TestAssessYears(t *testing.T) {
	rb := mustRulebook(t)
	tests := []struct {
		name         string
		records      []Record
		party        Party
		scope        Scope
		year         int
		tol          float64
		wantPercent  float64
		wantAllowed  float64
		wantCons     float64
		wantHeadroom float64
		wantOutcome  Outcome
		wantNote     string
	}{
		{
			// Non-A5 HCFC 2015: 10 % (Art. 2F) × 197.5 = 19.75 ODP t;
			// consumption 17.6 → headroom 2.15.
			name: "non-A5 HCFC 2015 (10 %)", records: nonA5History(), party: partyNonA5, scope: ScopeCI, year: 2015, tol: tolODP,
			wantPercent: 10, wantAllowed: 19.75, wantCons: 17.6, wantHeadroom: 2.15, wantOutcome: Within,
			wantNote: "step in force: 10 % of baseline from 2015",
		},
		{
			// Non-A5 HCFC 2025: step 0, annual servicing cap 0.5 % for 2020–2029 (Art. 2F paras 1 and 3-6;
			// para 6: an annual cap, not an average) × 197.5 = 0.9875 ODP t; consumption 1.1
			// (exports to a non-Party not deducted) → headroom −0.1125: exceeded.
			name: "non-A5 HCFC 2025 (servicing cap 0.5 %)", records: nonA5History(), party: partyNonA5, scope: ScopeCI, year: 2025, tol: tolODP,
			wantPercent: 0.5, wantAllowed: 0.9875, wantCons: 1.1, wantHeadroom: -0.1125, wantOutcome: Exceeded,
			wantNote: "annual servicing cap 2020–2029",
		},
		{
			// Non-A5 HCFC 2030: 0 % (Art. 2F para 6); reported zero → headroom 0: within.
			name: "non-A5 HCFC 2030 (0 %)", records: nonA5History(), party: partyNonA5, scope: ScopeCI, year: 2030, tol: tolODP,
			wantPercent: 0, wantAllowed: 0, wantCons: 0, wantHeadroom: 0, wantOutcome: Within,
			wantNote: "step in force: 0 % of baseline from 2020",
		},
		{
			// A5 HCFC 2025: 32.5 % (Art. 5 para 8 ter (a)-(e)) × 163.55 =
			// 53.15375 ODP t; consumption 49.5 (used imports not counted) → headroom 3.65375.
			name: "A5 HCFC 2025 (32.5 %)", records: a5History(), party: partyA5G1, scope: ScopeCI, year: 2025, tol: tolODP,
			wantPercent: 32.5, wantAllowed: 53.15375, wantCons: 49.5, wantHeadroom: 3.65375, wantOutcome: Within,
			wantNote: "32.5 % of baseline from 2025 (Art. 5 para 8 ter (a)-(e)",
		},
		{
			// Non-A5 HFC 2024: 60 % (Art. 2J para 1) × 2 317 786.667 =
			// 1 390 672 t CO2-eq; consumption 1 136 000 → headroom 254 672.
			name: "non-A5 HFC 2024 (60 %)", records: nonA5History(), party: partyNonA5, scope: ScopeF, year: 2024, tol: tolCO2e,
			wantPercent: 60, wantAllowed: 1390672, wantCons: 1136000, wantHeadroom: 254672, wantOutcome: Within,
			wantNote: "Art. 2J para 1",
		},
		{
			// Non-A5 variant HFC 2025: 65 % (Art. 2J para 2) ×
			// 2 580 866.667 = 1 677 563.333; consumption 1 430 000 → headroom 247 563.333.
			name: "non-A5 variant HFC 2025 (65 %)", records: nonA5History(), party: partyNonA5Variant, scope: ScopeF, year: 2025, tol: tolCO2e,
			wantPercent: 65, wantAllowed: 1677563.333, wantCons: 1430000, wantHeadroom: 247563.333, wantOutcome: Within,
			wantNote: "Art. 2J para 2",
		},
		{
			// A5 Group 1 HFC 2029: 90 % (Annex F control summary) ×
			// 8 308 250.833 = 7 477 425.75; consumption 6 017 500 → headroom 1 459 925.75.
			name: "A5 Group 1 HFC 2029 (90 %)", records: a5History(), party: partyA5G1, scope: ScopeF, year: 2029, tol: tolCO2e,
			wantPercent: 90, wantAllowed: 7477425.75, wantCons: 6017500, wantHeadroom: 1459925.75, wantOutcome: Within,
			wantNote: "step in force: 90 % of baseline from 2029",
		},
		{
			// Non-A5 CFCs 2016: 0 % from 1996 (Art. 2A); no baseline
			// needed. CFC-11 imports 2 t → 2 ODP t → headroom −2 (invented data).
			name: "non-A5 CFCs 2016 (0 %, no baseline needed)", records: []Record{rec(2016, cfc11, Flows{Imports: num("2")})},
			party: partyNonA5, scope: ScopeAI, year: 2016, tol: tolODP,
			wantPercent: 0, wantAllowed: 0, wantCons: 2, wantHeadroom: -2, wantOutcome: Exceeded,
			wantNote: "essential uses are exempted",
		},
		{
			// A5 CFCs 2016: 0 % from 2010, status P (Art. 5 paras 1 and 8 bis; the 2010 step is from
			// memory of the Ozone Secretariat's summary of control measures). Reported zero → within; the note flags the
			// status (invented data).
			name: "A5 CFCs 2016 (0 %, status P)", records: []Record{rec(2016, cfc12, Flows{})},
			party: partyA5G1, scope: ScopeAI, year: 2016, tol: tolODP,
			wantPercent: 0, wantAllowed: 0, wantCons: 0, wantHeadroom: 0, wantOutcome: Within,
			wantNote: "rule status P: partially verified",
		},
		{
			// Non-A5 methyl bromide 2016: 0 % from 2005 (Art. 2H); imports
			// 50 t all used for QPS → 0 ODP t (QPS excluded): within (invented data).
			name: "non-A5 methyl bromide 2016, all QPS", records: []Record{rec(2016, mbr, Flows{Imports: num("50"), QPS: num("50")})},
			party: partyNonA5, scope: ScopeEI, year: 2016, tol: tolODP,
			wantPercent: 0, wantAllowed: 0, wantCons: 0, wantHeadroom: 0, wantOutcome: Within,
			wantNote: "critical uses are exempted",
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			a, err := rb.Assess(tc.records, tc.party, tc.scope, tc.year, tc.year)
			if err != nil {
				t.Fatalf("Assess: %v", err)
			}
			if len(a.Years) != 1 {
				t.Fatalf("got %d years, want 1", len(a.Years))
			}
			y := a.Years[0]
			near(t, "allowed percent", y.AllowedPercent, tc.wantPercent, 1e-12)
			near(t, "allowed", y.Allowed, tc.wantAllowed, tc.tol)
			near(t, "consumption", y.Consumption, tc.wantCons, tc.tol)
			near(t, "headroom", y.Headroom, tc.wantHeadroom, tc.tol)
			if y.Outcome != tc.wantOutcome {
				t.Errorf("outcome = %s, want %s (notes %v)", y.Outcome, tc.wantOutcome, y.Notes)
			}
			if !hasNote(y.Notes, tc.wantNote) {
				t.Errorf("notes %q lack %q", y.Notes, tc.wantNote)
			}
			if a.RulebookVersion == "" || a.RulebookAsOf == "" {
				t.Errorf("assessment does not name the rulebook version: %+v", a)
			}
			if tc.wantPercent == 0 && a.Baseline != nil {
				t.Errorf("a 0 %% year should not need a baseline, got %+v", a.Baseline)
			}
		})
	}
}

// TestAssessPeriodAverage: A5 HCFC 2030–2039, the ten-year mean may reach 2.5 % of the
// baseline; a single year may exceed it (Art. 5 para 8 ter (a)-(e): the sum
// over the ten years divided by ten). Baseline 163.55 ODP t (history_test.go, invented data):
// 2.5 % = 4.08875 ODP t a year; budget 10 × 4.08875 = 40.8875 ODP t.
func TestAssessPeriodAverage(t *testing.T) {
	rb := mustRulebook(t)
	a, err := rb.Assess(a5History(), partyA5G1, ScopeCI, 2030, 2032)
	if err != nil {
		t.Fatal(err)
	}
	type want struct {
		cons, sum, mean, pct, room, perYear float64
		remaining                           int
		outcome                             Outcome
	}
	wants := []want{
		// 2030: 5.5 ODP t = 3.363 % of baseline (5.5 / 163.55), above 2.5 % in a single year
		// yet within: room left 40.8875 − 5.5 = 35.3875 for 9 years (3.931944 a year).
		{cons: 5.5, sum: 5.5, mean: 5.5, pct: 3.362886, room: 35.3875, perYear: 3.931944, remaining: 9, outcome: Within},
		// 2031: 3.3; sum 8.8, running mean 4.4 = 2.690 % (4.4 / 163.55); room 32.0875 for 8
		// years (4.010938 a year).
		{cons: 3.3, sum: 8.8, mean: 4.4, pct: 2.690309, room: 32.0875, perYear: 4.010938, remaining: 8, outcome: Within},
	}
	for i, w := range wants {
		y := a.Years[i]
		if y.Period == nil {
			t.Fatalf("%d: no period progress; notes %v", y.Year, y.Notes)
		}
		p := y.Period
		near(t, "consumption", y.Consumption, w.cons, tolODP)
		near(t, "allowed (mean level)", y.Allowed, 4.08875, tolODP)
		near(t, "budget", p.Budget, 40.8875, tolODP)
		near(t, "sum", p.Sum, w.sum, tolODP)
		near(t, "running mean", p.RunningMean, w.mean, tolODP)
		near(t, "running percent", p.RunningPercent, w.pct, 1e-5)
		near(t, "room left", p.RoomLeft, w.room, tolODP)
		near(t, "headroom = room left", y.Headroom, w.room, tolODP)
		near(t, "room per year", p.RoomPerYear, w.perYear, tolODP)
		if p.YearsRemaining != w.remaining || y.Outcome != w.outcome {
			t.Errorf("%d: remaining %d outcome %s, want %d %s", y.Year, p.YearsRemaining, y.Outcome, w.remaining, w.outcome)
		}
		if !hasNote(y.Notes, "a single year may exceed it") || !hasNote(y.Notes, "room left") {
			t.Errorf("%d: notes should explain the averaging rule: %v", y.Year, y.Notes)
		}
	}
	// 2032 has no data: not assessed, and the note says which year is missing.
	y := a.Years[2]
	if y.Outcome != NotAssessed || !hasNote(y.Notes, "no data") || y.Period != nil {
		t.Errorf("2032 = %+v; want not assessed for missing data", y)
	}
}

// TestAssessPeriodAverageEnds: the budget used up early, and a complete period.
func TestAssessPeriodAverageEnds(t *testing.T) {
	rb := mustRulebook(t)
	base := without(without(a5History(), 2030, ScopeCI), 2031, ScopeCI)

	// 2030 imports 800 t → 44 ODP t > budget 40.8875 → room −3.1125: exceeded in the first
	// year, since the total can no longer fit (invented data; rule as above).
	over := append(slicesClone(base), rec(2030, hcfc22, Flows{Imports: num("800")}))
	a, err := rb.Assess(over, partyA5G1, ScopeCI, 2030, 2030)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "room left", a.Years[0].Headroom, -3.1125, tolODP)
	if a.Years[0].Outcome != Exceeded || !hasNote(a.Years[0].Notes, "already exceeds its budget") {
		t.Errorf("2030 = %+v; want exceeded", a.Years[0])
	}

	// 2030–2039 HCFC-22 imports 70 t a year → 3.85 ODP t a year; sum 38.5 ≤ 40.8875;
	// mean 3.85 / 163.55 = 2.354 % ≤ 2.5 %: met (invented data; rule as above).
	full := slicesClone(base)
	for y := 2030; y <= 2039; y++ {
		full = append(full, rec(y, hcfc22, Flows{Imports: num("70")}))
	}
	a, err = rb.Assess(full, partyA5G1, ScopeCI, 2039, 2040)
	if err != nil {
		t.Fatal(err)
	}
	last := a.Years[0]
	near(t, "sum", last.Period.Sum, 38.5, tolODP)
	near(t, "room left", last.Headroom, 2.3875, tolODP)
	if last.Outcome != Within || last.Period.YearsRemaining != 0 || !hasNote(last.Notes, "period complete") || !hasNote(last.Notes, ": met") {
		t.Errorf("2039 = %+v; want the period complete and met", last)
	}
	// 2040: back to the 0 % step, no averaging; no data for 2040 → not assessed.
	if y := a.Years[1]; y.Period != nil || !y.AllowedPercent.IsZero() || y.Outcome != NotAssessed {
		t.Errorf("2040 = %+v; want 0 %% step, no period, not assessed (no data)", y)
	}
}

func slicesClone(r []Record) []Record { return append([]Record(nil), r...) }

// TestAssessNotAssessed: years lacking a rule, data or a complete baseline are reported as
// not assessed with a note saying why.
func TestAssessNotAssessed(t *testing.T) {
	rb := mustRulebook(t)
	tests := []struct {
		name    string
		records []Record
		party   Party
		scope   Scope
		year    int
		note    string
	}{
		// Non-A5 HCFC control starts 1996 (Art. 2F para 1).
		{"before the first step", nonA5History(), partyNonA5, ScopeCI, 1990, "no control step"},
		{"no data for the year", nonA5History(), partyNonA5, ScopeCI, 2016, "no data: no record for C/I (HCFCs) in 2016"},
		{"baseline incomplete", without(a5History(), 2010, ScopeCI), partyA5G1, ScopeCI, 2025, "baseline incomplete: C/I 2010"},
		{"HFC baseline incomplete", without(a5History(), 2010, ScopeCI), partyA5G1, ScopeF, 2029, "C/I 2010: no consumption data for C/I (HCFCs) (HCFC component)"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			a, err := rb.Assess(tc.records, tc.party, tc.scope, tc.year, tc.year)
			if err != nil {
				t.Fatal(err)
			}
			y := a.Years[0]
			if y.Outcome != NotAssessed || !hasNote(y.Notes, tc.note) {
				t.Errorf("outcome %s notes %q; want not assessed with %q", y.Outcome, y.Notes, tc.note)
			}
		})
	}
}

func TestAssessRejects(t *testing.T) {
	rb := mustRulebook(t)
	tests := []struct {
		name     string
		party    Party
		scope    Scope
		from, to int
		field    string
	}{
		{"range reversed", partyNonA5, ScopeCI, 2020, 2019, "to_year"},
		{"year out of range", partyNonA5, ScopeCI, 1900, 2019, "from_year"},
		{"unknown scope", partyNonA5, Scope("X"), 2019, 2019, "scope"},
		{"HFC group unset", Party{Type: terms.PartyTypeArticle5}, ScopeF, 2029, 2029, "party.hfc"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := rb.Assess(nil, tc.party, tc.scope, tc.from, tc.to)
			var fe *FieldError
			if !errors.As(err, &fe) || fe.Field != tc.field {
				t.Fatalf("err = %v; want a FieldError on %s", err, tc.field)
			}
		})
	}
}

// TestAllowedLevel: next year's allowed level, as quota planning uses it.
func TestAllowedLevel(t *testing.T) {
	rb := mustRulebook(t)
	tests := []struct {
		name    string
		records []Record
		party   Party
		scope   Scope
		year    int
		tol     float64
		want    float64
		wantErr error
	}{
		// 0.5 % × 197.5 = 0.9875 ODP t (Art. 2F paras 1 and 3-6; history_test.go).
		{"non-A5 HCFC 2026 servicing cap", nonA5History(), partyNonA5, ScopeCI, 2026, tolODP, 0.9875, nil},
		// 90 % × 8 308 250.833 = 7 477 425.75 (Art. 5 para 8 qua; Ozone Secretariat Annex F control summary; history_test.go).
		{"A5 Group 1 HFC 2030", a5History(), partyA5G1, ScopeF, 2030, tolCO2e, 7477425.75, nil},
		// 2.5 % × 163.55 = 4.08875, the period's mean level (Art. 5 para 8 ter (e)).
		{"A5 HCFC 2035 period mean level", a5History(), partyA5G1, ScopeCI, 2035, tolODP, 4.08875, nil},
		// 0 % from 2030 (Art. 2F para 6); no baseline needed.
		{"non-A5 HCFC 2031 zero", nonA5History(), partyNonA5, ScopeCI, 2031, tolODP, 0, nil},
		{"incomplete baseline", without(a5History(), 2009, ScopeCI), partyA5G1, ScopeCI, 2025, 0, 0, ErrIncompleteBaseline},
		// A5 Group 2 HFC control starts 2028 (Art. 5 para 8 qua; Ozone Secretariat Annex F control summary).
		{"no step yet", a5History(), partyA5G2, ScopeF, 2027, 0, 0, ErrNoRule},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			lv, err := rb.AllowedLevel(tc.records, tc.party, tc.scope, tc.year)
			if tc.wantErr != nil {
				if !errors.Is(err, tc.wantErr) {
					t.Fatalf("err = %v, want %v", err, tc.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			near(t, "allowed level", lv.Value, tc.want, tc.tol)
		})
	}
	_, err := rb.AllowedLevel(without(a5History(), 2009, ScopeCI), partyA5G1, ScopeCI, 2025)
	if err == nil || !strings.Contains(err.Error(), "C/I 2009") {
		t.Errorf("incomplete-baseline error should name the gap C/I 2009: %v", err)
	}
}
