package controls

import (
	"bytes"
	"errors"
	"strings"
	"testing"
)

// TestDefaultRulebookCoverage: every Party key has schedules for every scope, and a baseline
// for every scope with a non-zero step (C/II and C/III are 0 from the start: Arts. 2G and
// 2I, Art. 5 para 8 ter (f)).
func TestDefaultRulebookCoverage(t *testing.T) {
	rb := mustRulebook(t)
	if rb.Version != "halovet-1" || rb.AsOf != "2026-12-01" {
		t.Errorf("version %q as of %q; the tests below were written for halovet-1 of 2026-12-01", rb.Version, rb.AsOf)
	}
	parties := []Party{partyNonA5, partyNonA5Variant, partyA5G1, partyA5G2}
	for _, p := range parties {
		for _, sc := range AllScopes {
			if _, err := rb.Allowance(p, sc, 2050); err != nil {
				t.Errorf("%s/%s %s: no rule in 2050: %v", p.Type, p.HFC, sc, err)
			}
			_, err := rb.BaselineRule(p, sc)
			needs := sc != ScopeCII && sc != ScopeCIII
			if needs && err != nil {
				t.Errorf("%s/%s %s: no baseline: %v", p.Type, p.HFC, sc, err)
			}
			if !needs && !errors.Is(err, ErrNoRule) {
				t.Errorf("%s %s: unexpected baseline row (err %v)", p.Type, sc, err)
			}
		}
	}
}

// TestDefaultRulebookIsACopy: a caller changing its rulebook does not change the next one.
func TestDefaultRulebookIsACopy(t *testing.T) {
	a := mustRulebook(t)
	a.Rules[0].Percent = 99
	a.Baselines[0].FromYear = 2000
	b := mustRulebook(t)
	if b.Rules[0].Percent == 99 || b.Baselines[0].FromYear == 2000 {
		t.Fatal("DefaultRulebook handed out shared data")
	}
}

// TestAllowanceLookup checks the schedule rows (values and status marks) against the control
// measures of the Montreal Protocol as amended and adjusted: Arts. 2A-2J and Art. 5, cited per row.
func TestAllowanceLookup(t *testing.T) {
	rb := mustRulebook(t)
	tests := []struct {
		name        string
		party       Party
		scope       Scope
		year        int
		wantStep    float64
		wantFrom    int
		wantStatus  Status
		wantCap     float64 // servicing cap percent, -1 when none
		wantAverage float64 // period-average percent, -1 when none
		wantSource  string
	}{
		// Art. 2F non-A5 HCFC: 1996 100, 2004 65, 2010 25, 2015 10, 2020 0 + cap 0.5 to 2029, 2030 0.
		{"non-A5 HCFC 2003", partyNonA5, ScopeCI, 2003, 100, 1996, Verified, -1, -1, "Art. 2F paras 1 and 3-6"},
		{"non-A5 HCFC 2004", partyNonA5, ScopeCI, 2004, 65, 2004, Verified, -1, -1, "Art. 2F"},
		{"non-A5 HCFC 2012", partyNonA5, ScopeCI, 2012, 25, 2010, Verified, -1, -1, "Art. 2F"},
		{"non-A5 HCFC 2019", partyNonA5, ScopeCI, 2019, 10, 2015, Verified, -1, -1, "Art. 2F"},
		{"non-A5 HCFC 2020 cap", partyNonA5, ScopeCI, 2020, 0, 2020, Verified, 0.5, -1, "Art. 2F paras 1 and 3-6"},
		{"non-A5 HCFC 2029 cap", partyNonA5, ScopeCI, 2029, 0, 2020, Verified, 0.5, -1, "Art. 2F paras 1 and 3-6"},
		{"non-A5 HCFC 2030", partyNonA5, ScopeCI, 2030, 0, 2020, Verified, -1, -1, "Art. 2F paras 1 and 3-6"},
		// Art. 5 para 8 ter (a)-(e) A5 HCFC: 2013 100, 2015 90, 2020 65, 2025 32.5, 2030 0 with 2030–2039 mean 2.5.
		{"A5 HCFC 2014", partyA5G1, ScopeCI, 2014, 100, 2013, Verified, -1, -1, "Art. 5 para 8 ter"},
		{"A5 HCFC 2015", partyA5G1, ScopeCI, 2015, 90, 2015, Verified, -1, -1, "Art. 5 para 8 ter"},
		{"A5 HCFC 2024", partyA5G1, ScopeCI, 2024, 65, 2020, Verified, -1, -1, "Art. 5 para 8 ter"},
		{"A5 HCFC 2025", partyA5G1, ScopeCI, 2025, 32.5, 2025, Verified, -1, -1, "Art. 5 para 8 ter"},
		{"A5 HCFC 2039 average", partyA5G2, ScopeCI, 2039, 0, 2030, Verified, -1, 2.5, "Art. 5 para 8 ter"},
		{"A5 HCFC 2040", partyA5G1, ScopeCI, 2040, 0, 2030, Verified, -1, -1, "Art. 5 para 8 ter"},
		// Art. 2J para 1 HFC non-A5: 2019 90, 2024 60, 2029 30, 2034 20, 2036 15.
		{"non-A5 HFC 2019", partyNonA5, ScopeF, 2019, 90, 2019, Verified, -1, -1, "Art. 2J para 1"},
		{"non-A5 HFC 2028", partyNonA5, ScopeF, 2028, 60, 2024, Verified, -1, -1, "Art. 2J para 1"},
		{"non-A5 HFC 2033", partyNonA5, ScopeF, 2033, 30, 2029, Verified, -1, -1, "Art. 2J para 1"},
		{"non-A5 HFC 2035", partyNonA5, ScopeF, 2035, 20, 2034, Verified, -1, -1, "Art. 2J para 1"},
		{"non-A5 HFC 2036", partyNonA5, ScopeF, 2036, 15, 2036, Verified, -1, -1, "Art. 2J para 1"},
		// Art. 2J para 2 variant: 2020 95, 2025 65, 2029 30, 2034 20, 2036 15.
		{"variant HFC 2020", partyNonA5Variant, ScopeF, 2020, 95, 2020, Verified, -1, -1, "Art. 2J para 2"},
		{"variant HFC 2025", partyNonA5Variant, ScopeF, 2025, 65, 2025, Verified, -1, -1, "Art. 2J para 2"},
		{"variant HFC 2040", partyNonA5Variant, ScopeF, 2040, 15, 2036, Verified, -1, -1, "Art. 2J para 2"},
		// Art. 5 para 8 qua, Ozone Secretariat Annex F control summary, A5 Group 1: 2024 100, 2029 90, 2035 70, 2040 50, 2045 20.
		{"A5 G1 HFC 2024", partyA5G1, ScopeF, 2024, 100, 2024, Verified, -1, -1, "Art. 5 para 8 qua"},
		{"A5 G1 HFC 2029", partyA5G1, ScopeF, 2029, 90, 2029, Verified, -1, -1, "Art. 5 para 8 qua"},
		{"A5 G1 HFC 2035", partyA5G1, ScopeF, 2035, 70, 2035, Verified, -1, -1, "Art. 5 para 8 qua"},
		{"A5 G1 HFC 2044", partyA5G1, ScopeF, 2044, 50, 2040, Verified, -1, -1, "Art. 5 para 8 qua"},
		{"A5 G1 HFC 2045", partyA5G1, ScopeF, 2045, 20, 2045, Verified, -1, -1, "Art. 5 para 8 qua"},
		// Same sources, A5 Group 2: 2028 100, 2032 90, 2037 80, 2042 70, 2047 15.
		{"A5 G2 HFC 2031", partyA5G2, ScopeF, 2031, 100, 2028, Verified, -1, -1, "Art. 5 para 8 qua"},
		{"A5 G2 HFC 2032", partyA5G2, ScopeF, 2032, 90, 2032, Verified, -1, -1, "Art. 5 para 8 qua"},
		{"A5 G2 HFC 2037", partyA5G2, ScopeF, 2037, 80, 2037, Verified, -1, -1, "Art. 5 para 8 qua"},
		{"A5 G2 HFC 2042", partyA5G2, ScopeF, 2042, 70, 2042, Verified, -1, -1, "Art. 5 para 8 qua"},
		{"A5 G2 HFC 2047", partyA5G2, ScopeF, 2047, 15, 2047, Verified, -1, -1, "Art. 5 para 8 qua"},
		// Zeros, non-A5 (Arts. 2A-2I): CFCs 1996, halons 1994, Annex B 1996, MB 2005, HBFC 1996, BCM 2002.
		{"non-A5 CFCs", partyNonA5, ScopeAI, 1996, 0, 1996, Verified, -1, -1, "Art. 2A"},
		{"non-A5 CFCs 1995", partyNonA5, ScopeAI, 1995, 25, 1994, Verified, -1, -1, "Art. 2A"},
		{"non-A5 halons", partyNonA5, ScopeAII, 1994, 0, 1994, Verified, -1, -1, "Art. 2B"},
		{"non-A5 other CFCs", partyNonA5, ScopeBI, 1996, 0, 1996, Verified, -1, -1, "Art. 2C"},
		{"non-A5 CCl4", partyNonA5, ScopeBII, 1996, 0, 1996, Verified, -1, -1, "Art. 2D"},
		{"non-A5 CCl4 1995", partyNonA5, ScopeBII, 1995, 15, 1995, Verified, -1, -1, "Art. 2D"},
		{"non-A5 methyl chloroform", partyNonA5, ScopeBIII, 1996, 0, 1996, Verified, -1, -1, "Art. 2E"},
		{"non-A5 MB 2004", partyNonA5, ScopeEI, 2004, 30, 2003, Verified, -1, -1, "Art. 2H"},
		{"non-A5 MB", partyNonA5, ScopeEI, 2005, 0, 2005, Verified, -1, -1, "Art. 2H"},
		{"non-A5 HBFC", partyNonA5, ScopeCII, 1996, 0, 1996, Verified, -1, -1, "Art. 2G"},
		{"non-A5 BCM", partyNonA5, ScopeCIII, 2002, 0, 2002, Verified, -1, -1, "Art. 2I"},
		// Zeros, A5 (Art. 5 paras 1, 8 bis and 8 ter; marks as in data/schedules.csv): CFCs 2010 P,
		// halons 2010 P, B/I 2010 P, CCl4 2010 U, methyl chloroform 2015 U, MB 2015 V, HBFC 1996 V, BCM 2002 U.
		{"A5 CFCs", partyA5G1, ScopeAI, 2010, 0, 2010, Partial, -1, -1, "Art. 5"},
		{"A5 CFCs 2006", partyA5G1, ScopeAI, 2006, 50, 2005, Partial, -1, -1, "Art. 5"},
		{"A5 halons", partyA5G1, ScopeAII, 2010, 0, 2010, Partial, -1, -1, "Art. 5"},
		{"A5 other CFCs", partyA5G1, ScopeBI, 2010, 0, 2010, Partial, -1, -1, "Art. 5"},
		{"A5 CCl4", partyA5G1, ScopeBII, 2010, 0, 2010, Unverified, -1, -1, "Art. 5"},
		{"A5 methyl chloroform", partyA5G1, ScopeBIII, 2015, 0, 2015, Unverified, -1, -1, "Art. 5"},
		{"A5 MB 2005", partyA5G1, ScopeEI, 2005, 80, 2005, Verified, -1, -1, "Art. 5 para 8 ter (g)"},
		{"A5 MB", partyA5G1, ScopeEI, 2015, 0, 2015, Verified, -1, -1, "Art. 5 para 8 ter (g)"},
		{"A5 HBFC", partyA5G1, ScopeCII, 1996, 0, 1996, Verified, -1, -1, "Art. 5 para 8 ter (f)"},
		{"A5 BCM", partyA5G1, ScopeCIII, 2002, 0, 2002, Unverified, -1, -1, "Art. 2I"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			a, err := rb.Allowance(tc.party, tc.scope, tc.year)
			if err != nil {
				t.Fatal(err)
			}
			if a.Step.Percent != tc.wantStep || a.Step.FromYear != tc.wantFrom || a.Step.Status != tc.wantStatus {
				t.Errorf("step = %v %% from %d [%s], want %v %% from %d [%s]",
					a.Step.Percent, a.Step.FromYear, a.Step.Status, tc.wantStep, tc.wantFrom, tc.wantStatus)
			}
			if !strings.Contains(a.Step.Source, tc.wantSource) {
				t.Errorf("source %q lacks %q", a.Step.Source, tc.wantSource)
			}
			switch {
			case tc.wantCap < 0 && a.Servicing != nil:
				t.Errorf("unexpected servicing cap %+v", a.Servicing)
			case tc.wantCap >= 0 && (a.Servicing == nil || a.Servicing.Percent != tc.wantCap):
				t.Errorf("servicing cap = %+v, want %v %%", a.Servicing, tc.wantCap)
			}
			switch {
			case tc.wantAverage < 0 && a.Average != nil:
				t.Errorf("unexpected period average %+v", a.Average)
			case tc.wantAverage >= 0 && (a.Average == nil || a.Average.Percent != tc.wantAverage || a.Average.Kind != KindPeriodAverage):
				t.Errorf("period average = %+v, want %v %%", a.Average, tc.wantAverage)
			}
		})
	}
	if _, err := rb.Allowance(partyNonA5, ScopeCI, 1995); !errors.Is(err, ErrNoRule) {
		t.Errorf("non-A5 HCFC 1995 (before the 1996 start): err = %v, want ErrNoRule", err)
	}
}

// TestBaselineRules checks the baseline rows against the treaty: Arts. 2A-2H and 2J paras 1-2
// (non-A5), Art. 5 para 3, para 8 ter (a) and (g) and para 8 qua (c), and the Ozone
// Secretariat's Annex F control summary for A5 Group 2.
func TestBaselineRules(t *testing.T) {
	rb := mustRulebook(t)
	tests := []struct {
		party     Party
		scope     Scope
		from, to  int
		countUsed bool
		term      Term
		termPct   float64
	}{
		{partyNonA5, ScopeAI, 1986, 1986, false, TermNone, 0},
		{partyNonA5, ScopeAII, 1986, 1986, false, TermNone, 0},
		{partyNonA5, ScopeBI, 1989, 1989, false, TermNone, 0},
		{partyNonA5, ScopeBIII, 1989, 1989, false, TermNone, 0},
		{partyNonA5, ScopeCI, 1989, 1989, false, TermCFC, 2.8},
		{partyNonA5, ScopeEI, 1991, 1991, false, TermNone, 0},
		{partyNonA5, ScopeF, 2011, 2013, false, TermHCFCCO2e, 15},
		{partyNonA5Variant, ScopeF, 2011, 2013, false, TermHCFCCO2e, 25},
		{partyA5G1, ScopeAI, 1995, 1997, true, TermNone, 0},
		{partyA5G1, ScopeBII, 1998, 2000, true, TermNone, 0},
		{partyA5G1, ScopeCI, 2009, 2010, true, TermNone, 0},
		{partyA5G1, ScopeEI, 1995, 1998, true, TermNone, 0},
		{partyA5G1, ScopeF, 2020, 2022, true, TermHCFCCO2e, 65},
		{partyA5G2, ScopeF, 2024, 2026, true, TermHCFCCO2e, 65},
	}
	for _, tc := range tests {
		t.Run(string(tc.scope)+" "+tc.party.HFC.String(), func(t *testing.T) {
			r, err := rb.BaselineRule(tc.party, tc.scope)
			if err != nil {
				t.Fatal(err)
			}
			if r.FromYear != tc.from || r.ToYear != tc.to || r.CountUsed != tc.countUsed || r.Term != tc.term || r.TermPercent != tc.termPct {
				t.Errorf("rule = %+v", r)
			}
			if r.Status != Verified {
				t.Errorf("status %s; every baseline's base years and term are stated in the article it cites, so it is V", r.Status)
			}
			// Counting used trade beyond the Annex A base years of Art. 5 para 3 is our
			// reading of Decision IV/24, so it must not be marked verified.
			if tc.countUsed && tc.scope != ScopeAI && r.CountUsedStatus == Verified {
				t.Errorf("count_used for %s is marked verified; the exception of Decision IV/24 para 2 names only the base years of Art. 5 para 1", tc.scope)
			}
		})
	}
}

const (
	schedHeader = "version,as_of,applies_to,scope,rule,from_year,to_year,percent,source,status,note\n"
	baseHeader  = "version,as_of,applies_to,scope,from_year,to_year,count_used,count_used_status,term,term_percent,source,status,note\n"
	schedRow    = "v1,2026-01-01,non-A5,C/I,step,1996,,100,Art. 2F para 1,V,\n"
	baseRow     = "v1,2026-01-01,non-A5,C/I,1989,1989,no,V,cfc,2.8,Art. 2F para 1,V,\n"
)

func TestParseSchedulesRejects(t *testing.T) {
	tests := []struct {
		name   string
		data   string
		column string
	}{
		{"no header", "", ""},
		{"wrong header", "a,b\n" + schedRow, ""},
		{"no rows", schedHeader + "# only a comment\n", ""},
		{"short row", schedHeader + "v1,2026-01-01,non-A5\n", ""},
		{"bad date", schedHeader + strings.Replace(schedRow, "2026-01-01", "2026-13-01", 1), "as_of"},
		{"variant for an ODS", schedHeader + strings.Replace(schedRow, "non-A5,C/I", "non-A5-variant,C/I", 1), "applies_to"},
		{"A5 for HFCs", schedHeader + strings.Replace(schedRow, "non-A5,C/I", "A5,F", 1), "applies_to"},
		{"bad scope", schedHeader + strings.Replace(schedRow, "C/I", "C/IV", 1), "scope"},
		{"bad kind", schedHeader + strings.Replace(schedRow, "step", "cap", 1), "rule"},
		{"bad year", schedHeader + strings.Replace(schedRow, "1996", "96", 1), "from_year"},
		{"to_year on a step", schedHeader + strings.Replace(schedRow, "1996,,", "1996,1999,", 1), "to_year"},
		{"cap without to_year", schedHeader + strings.Replace(schedRow, "step", "annual-cap-servicing", 1), "to_year"},
		{"cap ends before it starts", schedHeader + strings.Replace(strings.Replace(schedRow, "step", "period-average", 1), "1996,,", "1996,1990,", 1), "to_year"},
		{"percent above 100", schedHeader + strings.Replace(schedRow, ",100,", ",150,", 1), "percent"},
		{"percent NaN", schedHeader + strings.Replace(schedRow, ",100,", ",NaN,", 1), "percent"},
		{"no source", schedHeader + strings.Replace(schedRow, "Art. 2F para 1", "", 1), "source"},
		{"bad status", schedHeader + strings.Replace(schedRow, ",V,", ",X,", 1), "status"},
		{"duplicate step", schedHeader + schedRow + schedRow, "from_year"},
		{"overlapping caps", schedHeader + "v1,2026-01-01,non-A5,C/I,annual-cap-servicing,2020,2029,0.5,x,V,\nv1,2026-01-01,non-A5,C/I,annual-cap-servicing,2025,2030,0.5,x,V,\n", "from_year"},
		{"mixed versions", schedHeader + schedRow + strings.Replace(strings.Replace(schedRow, "v1", "v2", 1), "1996", "2004", 1), "version"},
		{"unterminated quote", schedHeader + "v1,\"2026\n", ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ParseSchedules(strings.NewReader(tc.data))
			var de *DataError
			if !errors.As(err, &de) || !errors.Is(err, ErrRulebookData) {
				t.Fatalf("err = %v; want a DataError", err)
			}
			if de.Column != tc.column {
				t.Errorf("column = %q, want %q (%v)", de.Column, tc.column, err)
			}
		})
	}
}

func TestParseBaselinesRejects(t *testing.T) {
	tests := []struct {
		name   string
		data   string
		column string
	}{
		{"wrong header", schedHeader + baseRow, ""},
		{"bad count_used", baseHeader + strings.Replace(baseRow, ",no,", ",maybe,", 1), "count_used"},
		{"years reversed", baseHeader + strings.Replace(baseRow, "1989,1989", "1989,1986", 1), "to_year"},
		{"cfc term outside C/I", baseHeader + strings.Replace(baseRow, "non-A5,C/I", "non-A5,A/I", 1), "term"},
		{"hcfc term outside F", baseHeader + strings.Replace(baseRow, ",cfc,", ",hcfc-co2e,", 1), "term"},
		{"unknown term", baseHeader + strings.Replace(baseRow, ",cfc,", ",hfc,", 1), "term"},
		{"term without percent", baseHeader + strings.Replace(baseRow, ",2.8,", ",,", 1), "term_percent"},
		{"term percent zero", baseHeader + strings.Replace(baseRow, ",2.8,", ",0,", 1), "term_percent"},
		{"percent without term", baseHeader + strings.Replace(baseRow, ",cfc,", ",,", 1), "term_percent"},
		{"duplicate", baseHeader + baseRow + baseRow, "scope"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ParseBaselines(strings.NewReader(tc.data))
			var de *DataError
			if !errors.As(err, &de) {
				t.Fatalf("err = %v; want a DataError", err)
			}
			if de.Column != tc.column {
				t.Errorf("column = %q, want %q (%v)", de.Column, tc.column, err)
			}
		})
	}
	// The two files must carry the same version.
	_, err := ParseRulebook(strings.NewReader(schedHeader+schedRow), strings.NewReader(baseHeader+strings.Replace(baseRow, "v1", "v2", 1)))
	if !errors.Is(err, ErrRulebookData) {
		t.Errorf("mismatched versions: err = %v, want ErrRulebookData", err)
	}
	rb, err := ParseRulebook(strings.NewReader(schedHeader+schedRow), strings.NewReader(baseHeader+baseRow))
	if err != nil || rb.Version != "v1" || len(rb.Rules) != 1 || len(rb.Baselines) != 1 {
		t.Errorf("minimal rulebook: %+v, %v", rb, err)
	}
}

func embedded(t interface{ Fatal(...any) }, name string) []byte {
	b, err := dataFS.ReadFile("data/" + name)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// FuzzParseSchedules: the parser never panics, and whatever it accepts is well formed.
func FuzzParseSchedules(f *testing.F) {
	f.Add(embedded(f, "schedules.csv"))
	f.Add([]byte(schedHeader + schedRow))
	f.Add([]byte(schedHeader + "v1,2026-01-01,A5,C/I,period-average,2030,2039,2.5,x,V,\"a, b\"\n"))
	f.Add([]byte(schedHeader + "v1,2026-01-01,A5-group2,F,step,2028,,100,x,U,\n"))
	f.Add([]byte("# comment\n\n" + schedHeader))
	f.Fuzz(func(t *testing.T, data []byte) {
		rules, err := ParseSchedules(bytes.NewReader(data))
		if err != nil {
			if !errors.Is(err, ErrRulebookData) {
				t.Fatalf("error does not wrap ErrRulebookData: %v", err)
			}
			return
		}
		for _, r := range rules {
			if !r.Scope.valid() || r.Percent < 0 || r.Percent > 100 || r.FromYear < MinYear || r.FromYear > MaxYear ||
				(r.Kind == KindStep) != (r.ToYear == 0) || (r.Kind != KindStep && r.ToYear < r.FromYear) || r.Source == "" || r.Version != rules[0].Version {
				t.Fatalf("accepted a malformed rule: %+v", r)
			}
		}
	})
}

// FuzzParseBaselines: the parser never panics, and whatever it accepts is well formed.
func FuzzParseBaselines(f *testing.F) {
	f.Add(embedded(f, "baselines.csv"))
	f.Add([]byte(baseHeader + baseRow))
	f.Add([]byte(baseHeader + "v1,2026-01-01,A5-group1,F,2020,2022,yes,P,hcfc-co2e,65,x,V,\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		rows, err := ParseBaselines(bytes.NewReader(data))
		if err != nil {
			if !errors.Is(err, ErrRulebookData) {
				t.Fatalf("error does not wrap ErrRulebookData: %v", err)
			}
			return
		}
		for _, r := range rows {
			if !r.Scope.valid() || r.ToYear < r.FromYear || (r.Term == TermNone) != (r.TermPercent == 0) ||
				r.TermPercent < 0 || r.TermPercent > 100 || r.Source == "" {
				t.Fatalf("accepted a malformed baseline: %+v", r)
			}
		}
	})
}
