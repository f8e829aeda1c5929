package controls

import (
	"errors"
	"slices"
	"strings"
	"testing"

	"github.com/halovet/halovet/terms"
)

// TestBaselineODS checks ODP-tonne baselines; arithmetic in history_test.go (worked example,
// invented data).
func TestBaselineODS(t *testing.T) {
	rb := mustRulebook(t)
	tests := []struct {
		name      string
		records   []Record
		party     Party
		scope     Scope
		wantYears []wantYear
		wantMean  float64
		wantCFC   float64 // CFC term
		wantValue float64
		wantRule  string
	}{
		{
			// 1989 HCFC 71.5 + 2.8 % × 1989 CFC 4500 = 197.5 ODP t
			// (rule: Art. 2F para 1).
			name: "non-A5 HCFC: 1989 + 2.8 % of 1989 CFCs", records: nonA5History(), party: partyNonA5, scope: ScopeCI,
			wantYears: []wantYear{{1989, 71.5, true}}, wantMean: 71.5, wantCFC: 126, wantValue: 197.5,
			wantRule: "Art. 2F para 1 [V]",
		},
		{
			// (165 + 162.1) / 2 = 163.55 ODP t, used imports of 2010 counted
			// (rule: Art. 5 para 8 ter (a); Decision IV/24 para 2).
			name: "A5 HCFC: mean 2009–2010", records: a5History(), party: partyA5G1, scope: ScopeCI,
			wantYears: []wantYear{{2009, 165, true}, {2010, 162.1, true}}, wantMean: 163.55, wantValue: 163.55,
			wantRule: "Art. 5 para 8 ter (a) [V]",
		},
		{
			// Non-A5 CFC baseline is 1986 (Art. 2A): 1986 CFC-11
			// imports 500 t → 500 ODP t (invented data).
			name:    "non-A5 CFCs: 1986",
			records: []Record{rec(1986, cfc11, Flows{Imports: num("500")})}, party: partyNonA5, scope: ScopeAI,
			wantYears: []wantYear{{1986, 500, true}}, wantMean: 500, wantValue: 500,
			wantRule: "Art. 2A [V]",
		},
		{
			// A5 methyl bromide baseline is the 1995–1998 mean (Art. 5 para 8 ter (g);
			// QPS left out under para 8 ter (g)(iv)): imports 100, 120, 140, 160 t less QPS 20 t each year →
			// 80, 100, 120, 140 t × 0.6 = 48, 60, 72, 84 ODP t; mean 66 ODP t (invented data).
			name: "A5 methyl bromide: mean 1995–1998, QPS excluded",
			records: []Record{
				rec(1995, mbr, Flows{Imports: num("100"), QPS: num("20")}), rec(1996, mbr, Flows{Imports: num("120"), QPS: num("20")}),
				rec(1997, mbr, Flows{Imports: num("140"), QPS: num("20")}), rec(1998, mbr, Flows{Imports: num("160"), QPS: num("20")}),
			},
			party: partyA5G1, scope: ScopeEI,
			wantYears: []wantYear{{1995, 48, true}, {1996, 60, true}, {1997, 72, true}, {1998, 84, true}},
			wantMean:  66, wantValue: 66,
			wantRule: "Art. 5 para 8 ter (g) [V]",
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			b, err := rb.Baseline(tc.records, tc.party, tc.scope)
			if err != nil {
				t.Fatalf("Baseline: %v", err)
			}
			if !b.Complete || len(b.Missing) > 0 {
				t.Fatalf("baseline incomplete: %v", b.Missing)
			}
			if b.Unit != UnitODPTonnes {
				t.Errorf("unit = %s, want ODP t", b.Unit)
			}
			if len(b.Years) != len(tc.wantYears) {
				t.Fatalf("years = %+v, want %+v", b.Years, tc.wantYears)
			}
			for i, y := range tc.wantYears {
				if b.Years[i].Year != y.Year || !b.Years[i].HasData {
					t.Errorf("year %d = %+v, want %+v", i, b.Years[i], y)
				}
				near(t, "base year amount", b.Years[i].Amount, y.Amount, tolODP)
			}
			near(t, "mean", b.Mean, tc.wantMean, tolODP)
			near(t, "CFC term", b.CFCTerm, tc.wantCFC, tolODP)
			near(t, "value", b.Value, tc.wantValue, tolODP)
			if b.RuleText() != tc.wantRule {
				t.Errorf("rule = %q, want %q", b.RuleText(), tc.wantRule)
			}
		})
	}
}

// TestBaselineA5UsedCounted: the used-import exclusion does not apply to an Article 5
// Party's base years (Decision IV/24 para 2); a non-A5 Party's base
// year leaves them out. Arithmetic in history_test.go (invented data).
func TestBaselineA5UsedCounted(t *testing.T) {
	rb := mustRulebook(t)
	b, err := rb.Baseline(a5History(), partyA5G1, ScopeCI)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "A5 HCFC baseline with used imports", b.Value, 163.55, tolODP) // not 160.8
	if !b.Rule.CountUsed || !slices.ContainsFunc(b.Notes, func(n string) bool { return strings.Contains(n, "Decision IV/24") }) {
		t.Errorf("A5 baseline should count used trade and say so: %+v", b.Notes)
	}
	// Same used import in a non-A5 base year: 1989 HCFC-22 imports 900 t + used 100 t →
	// 900 × 0.055 = 49.5 ODP t; with 1989 CFC-11 1000 t: + 2.8 % × 1000 = 28 → 77.5 ODP t.
	nb, err := rb.Baseline([]Record{
		rec(1989, hcfc22, Flows{Imports: num("900"), UsedImports: num("100")}),
		rec(1989, cfc11, Flows{Imports: num("1000")}),
	}, partyNonA5, ScopeCI)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "non-A5 HCFC baseline without used imports", nb.Value, 77.5, tolODP)
}

// TestBaselineHFC checks HFC baselines in CO2-eq with the HCFC component recomputed from
// base-year tonnages with the Kigali GWPs (HCFC-22 1810, HCFC-141b 725, HCFC-142b 2310;
// CFC-11 4750, CFC-12 10900; source: Montreal Protocol Annex C/Annex A Group I GWP columns
// (Kigali Amendment), equal to IPCC AR4 WG1 Table 2.14). Arithmetic in history_test.go (invented data).
func TestBaselineHFC(t *testing.T) {
	rb := mustRulebook(t)
	tests := []struct {
		name          string
		records       []Record
		party         Party
		wantMean      float64
		wantHCFC      float64 // HCFC baseline in CO2-eq
		wantHCFCCFC   float64 // its CFC term in CO2-eq (non-A5 only)
		wantShare     float64
		wantComponent float64
		wantValue     float64
		wantRule      string
	}{
		{
			// mean 2011–2013 1 923 166.667 + 15 % × 2 630 800 (= 394 620) = 2 317 786.667
			// (Art. 2J para 1).
			name: "non-A5: 2011–2013 + 15 %", records: nonA5History(), party: partyNonA5,
			wantMean: 1923166.667, wantHCFC: 2630800, wantHCFCCFC: 856800, wantShare: 0.15,
			wantComponent: 394620, wantValue: 2317786.667,
			wantRule: "Art. 2J para 1 [V]",
		},
		{
			// + 25 % × 2 630 800 (= 657 700) = 2 580 866.667 (Art. 2J para 2).
			name: "non-A5 variant: 2011–2013 + 25 %", records: nonA5History(), party: partyNonA5Variant,
			wantMean: 1923166.667, wantHCFC: 2630800, wantHCFCCFC: 856800, wantShare: 0.25,
			wantComponent: 657700, wantValue: 2580866.667,
			wantRule: "Art. 2J para 2 [V]",
		},
		{
			// mean 2020–2022 5 654 333.333 + 65 % × 4 082 950 (= 2 653 917.5) = 8 308 250.833
			// (Art. 5 para 8 qua (c)).
			name: "A5 Group 1: 2020–2022 + 65 %", records: a5History(), party: partyA5G1,
			wantMean: 5654333.333, wantHCFC: 4082950, wantShare: 0.65,
			wantComponent: 2653917.5, wantValue: 8308250.833,
			wantRule: "Art. 5 para 8 qua (c) [V]",
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			b, err := rb.Baseline(tc.records, tc.party, ScopeF)
			if err != nil {
				t.Fatalf("Baseline: %v", err)
			}
			if !b.Complete {
				t.Fatalf("incomplete: %v", b.Missing)
			}
			if b.Unit != UnitCO2eTonnes || b.HCFC == nil || b.HCFC.Unit != UnitCO2eTonnes {
				t.Fatalf("units: baseline %s, HCFC part %+v; want CO2-eq t for both", b.Unit, b.HCFC)
			}
			near(t, "mean", b.Mean, tc.wantMean, tolCO2e)
			near(t, "HCFC baseline CO2-eq", b.HCFC.Value, tc.wantHCFC, tolCO2e)
			near(t, "HCFC baseline CFC term CO2-eq", b.HCFC.CFCTerm, tc.wantHCFCCFC, tolCO2e)
			near(t, "HCFC share", b.HCFCShare, tc.wantShare, 1e-12)
			near(t, "HCFC component", b.HCFCComponent, tc.wantComponent, tolCO2e)
			near(t, "value", b.Value, tc.wantValue, tolCO2e)
			if b.RuleText() != tc.wantRule {
				t.Errorf("rule = %q, want %q", b.RuleText(), tc.wantRule)
			}
		})
	}
}

// TestBaselineZeroGWPNote: an HCFC without a listed GWP counts as 0 in the CO2-eq HCFC
// component (Annex C footnote), and the baseline says so. Data
// invented: non-A5 1989 HCFC-22 100 t (181 000), HCFC-31 50 t (0), CFC-11 0 t (a zero
// record); HFCs 2011–2013 HFC-32 100 t each (67 500). Baseline 67 500 + 15 % × 181 000 =
// 67 500 + 27 150 = 94 650 CO2-eq t.
func TestBaselineZeroGWPNote(t *testing.T) {
	rb := mustRulebook(t)
	b, err := rb.Baseline([]Record{
		rec(1989, hcfc22, Flows{Imports: num("100")}),
		rec(1989, hcfc31, Flows{Imports: num("50")}),
		rec(1989, cfc11, Flows{}),
		rec(2011, hfc32, Flows{Imports: num("100")}),
		rec(2012, hfc32, Flows{Imports: num("100")}),
		rec(2013, hfc32, Flows{Imports: num("100")}),
	}, partyNonA5, ScopeF)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "value", b.Value, 94650, tolCO2e)
	if !slices.ContainsFunc(b.HCFC.Notes, func(n string) bool { return strings.Contains(n, "HCFC-31") && strings.Contains(n, "counted as 0") }) {
		t.Errorf("HCFC part should note HCFC-31 counted as 0 CO2-eq: %v", b.HCFC.Notes)
	}
}

// TestBaselineMissing: a baseline that cannot be computed names the missing years and
// groups (invented data: the histories less some years).
func TestBaselineMissing(t *testing.T) {
	rb := mustRulebook(t)
	tests := []struct {
		name    string
		records []Record
		party   Party
		scope   Scope
		want    []Gap
	}{
		{
			name: "A5 HCFC without 2010", records: without(a5History(), 2010, ScopeCI), party: partyA5G1, scope: ScopeCI,
			want: []Gap{{ScopeCI, 2010, ""}},
		},
		{
			name: "non-A5 HCFC without 1989 CFCs", records: without(nonA5History(), 1989, ScopeAI), party: partyNonA5, scope: ScopeCI,
			want: []Gap{{ScopeAI, 1989, "CFC term"}},
		},
		{
			name:    "A5 Group 1 HFC without 2022 HFCs and 2010 HCFCs",
			records: without(without(a5History(), 2022, ScopeF), 2010, ScopeCI), party: partyA5G1, scope: ScopeF,
			want: []Gap{{ScopeF, 2022, ""}, {ScopeCI, 2010, "HCFC component"}},
		},
		{
			name:    "non-A5 HFC without 1989 CFCs",
			records: without(nonA5History(), 1989, ScopeAI), party: partyNonA5, scope: ScopeF,
			want: []Gap{{ScopeAI, 1989, "HCFC component, CFC term"}},
		},
		{
			// Group 2 base years 2024–2026 (Ozone Secretariat Annex F control summary) have no HFC data here.
			name: "A5 Group 2 HFC with no 2024–2026 data", records: a5History(), party: partyA5G2, scope: ScopeF,
			want: []Gap{{ScopeF, 2024, ""}, {ScopeF, 2025, ""}, {ScopeF, 2026, ""}},
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			b, err := rb.Baseline(tc.records, tc.party, tc.scope)
			if err != nil {
				t.Fatalf("Baseline: %v", err)
			}
			if b.Complete || !b.Value.IsZero() {
				t.Fatalf("Complete = %v, Value = %v; want incomplete with value 0", b.Complete, b.Value)
			}
			if !slices.Equal(b.Missing, tc.want) {
				t.Fatalf("Missing = %+v, want %+v", b.Missing, tc.want)
			}
			if s := b.Missing[0].String(); !strings.Contains(s, string(tc.want[0].Scope)) || !strings.Contains(s, "no consumption data") {
				t.Errorf("gap text %q should name the group and say what is missing", s)
			}
		})
	}
}

func TestBaselineErrors(t *testing.T) {
	rb := mustRulebook(t)
	tests := []struct {
		name  string
		party Party
		scope Scope
		want  error
	}{
		{"HBFCs need no baseline", partyNonA5, ScopeCII, ErrNoRule},
		{"bromochloromethane needs no baseline", partyA5G1, ScopeCIII, ErrNoRule},
		{"HFC group unset", Party{Type: terms.PartyTypeNonArticle5}, ScopeF, ErrInvalidInput},
		{"party type unset", Party{}, ScopeCI, ErrInvalidInput},
		{"A5 with non-A5 HFC group", Party{Type: terms.PartyTypeArticle5, HFC: terms.HFCGroupNonA5}, ScopeF, ErrInvalidInput},
		{"unknown scope", partyNonA5, Scope("D/I"), ErrInvalidInput},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := rb.Baseline(nonA5History(), tc.party, tc.scope)
			if !errors.Is(err, tc.want) {
				t.Fatalf("err = %v, want %v", err, tc.want)
			}
		})
	}
}
