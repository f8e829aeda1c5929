package main

import (
	"bytes"
	"context"
	"math"
	"strings"
	"testing"

	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

func TestMixText(t *testing.T) {
	conn := startTestServer(t, nil).conn
	ctx := context.Background()

	req, err := mixRequest("R-410A", 1000)
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	if err := mixReport(ctx, conn, &out, req, "text"); err != nil {
		t.Fatalf("mix R-410A --mass-kg 1000: %v", err)
	}
	s := out.String()
	lookupLineMatching(t, s, `^Mixture R-410A, 1000 kg$`)
	// source: UK government CO2-eq table (testdata/reference/blends.csv): R-410A 2088 (2087.5 unrounded);
	// 1 t x 2087.5 = 2087.5 CO2-eq t (metric tonnes x GWP, Art. 3 para 2).
	lookupLineMatching(t, s, `^\s+CO2-eq tonnes\s+2087\.5 `)
	lookupLineMatching(t, s, `^\s+AR4\s+2088 \(2087\.5\)\s+2088 \(2087\.5\)$`)
	// Per component: mass %, kg, group, ODP, ODP t, Annex GWP, CO2-eq t, class.
	// source: Kigali Amendment Annex F: HFC-32 675; 0.5 t x 675 = 337.5 CO2-eq t.
	lookupLineMatching(t, s, `^\s+HFC-32\s+50\s+500\s+F/I\s+0\s+0\s+675\s+337\.5\s+A2L$`)
	lookupLineMatching(t, s, `^\s+HFC-125\s+50\s+500\s+F/I\s+0\s+0\s+3500\s+1750\s+A1$`) // source: Annex F HFC-125 3500
	// WCO HS 2022 3827.63 (40 % or more HFC-125, below the 55 % of 3827.62); HS 2017 3824.78.
	lookupMustContain(t, s, "all components", "Annex F only (as the Protocol counts)", "3827.63", "3824.78", decisionSupportNotice)

	// source: Montreal Protocol Annex C Group I, HCFC-141b ODP 0.11: 1 t -> 0.11 ODP t.
	req, err = mixRequest("HCFC-141b:100", 1000)
	if err != nil {
		t.Fatal(err)
	}
	out.Reset()
	if err := mixReport(ctx, conn, &out, req, "text"); err != nil {
		t.Fatalf("mix HCFC-141b:100 --mass-kg 1000: %v", err)
	}
	lookupLineMatching(t, out.String(), `^Mixture HCFC-141b, 1000 kg$`) // a one-share composition is that substance
	lookupLineMatching(t, out.String(), `^\s+ODP tonnes\s+0\.11 `)
	lookupLineMatching(t, out.String(), `^\s+CO2-eq tonnes\s+0 `)

	// Per kg: no mass columns; a flammable component's caution reaches the footer.
	// source: ASHRAE 34 (reference blends.csv): R-401A is HCFC-22/HFC-152a/HCFC-124 53/13/34.
	req, err = mixRequest("HCFC-22:53,HFC-152a:13,HCFC-124:34", 0)
	if err != nil {
		t.Fatal(err)
	}
	out.Reset()
	if err := mixReport(ctx, conn, &out, req, "text"); err != nil {
		t.Fatalf("mix R-401A composition: %v", err)
	}
	s = out.String()
	// ODP: 0.53 x 0.055 + 0.34 x 0.022 = 0.03663 (Annex C Group I values).
	lookupLineMatching(t, s, `^Mixture \(ad-hoc composition\), per kg \(no --mass-kg given\)$`)
	lookupLineMatching(t, s, `^\s+ODP\s+0\.03663 `)
	lookupLineMatching(t, s, `^\s+component\s+mass %\s+Annex/Group\s+ODP\s+GWP \(MP\)\s+safety class$`)
	lookupMustContain(t, s, "per kg", "Contains flammable components HFC-152a")
	if strings.Contains(s, "mass kg") {
		t.Errorf("a per-kg report shows mass columns:\n%s", s)
	}
}

func TestMixJSON(t *testing.T) {
	conn := startTestServer(t, nil).conn
	req, err := mixRequest("R-507A", 2000)
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	if err := mixReport(context.Background(), conn, &out, req, "json"); err != nil {
		t.Fatalf("mix --output json R-507A: %v", err)
	}
	var ev halovetv1.EvaluateMixtureResponse
	if err := wirejson.Unmarshal(out.Bytes(), &ev); err != nil {
		t.Fatalf("output is not an EvaluateMixtureResponse in protobuf JSON: %v\n%s", err, out.String())
	}
	// source: UK government CO2-eq table (testdata/reference/blends.csv): R-507A 3985; 2 t -> 7970 CO2-eq t.
	if ev.GetDesignation() != "R-507A" || ev.GetCo2ETonnes() != "7970" {
		t.Errorf("designation %q, CO2-eq t %v; want R-507A and 7970", ev.GetDesignation(), ev.GetCo2ETonnes())
	}
}

func TestMixRequestParsing(t *testing.T) {
	type share struct {
		id  string
		pct float64
	}
	cases := []struct {
		name   string
		spec   string
		mass   float64
		blend  string
		shares []share
		code   int // 0: accepted
	}{
		{"blend", " R-410A ", 0, "R-410A", nil, 0},
		{"substance by chemical name", "1,1,1,2-tetrafluoroethane", 5, "1,1,1,2-tetrafluoroethane", nil, 0},
		{"composition", "R-32:50,R-125:50", 10, "", []share{{"R-32", 50}, {"R-125", 50}}, 0},
		{"chemical names with commas, spaces, percent signs", "1,1,1,2-tetrafluoroethane:52, R-32 : 23 ,R-125:25%", 0, "",
			[]share{{"1,1,1,2-tetrafluoroethane", 52}, {"R-32", 23}, {"R-125", 25}}, 0},
		{"sum not checked locally", "R-32:50,R-125:49.5", 0, "", []share{{"R-32", 50}, {"R-125", 49.5}}, 0},
		{"share without percent", "R-32:50,R-125", 0, "", nil, 2},
		{"percent not a number", "R-32:fifty,R-125:50", 0, "", nil, 2},
		{"percent NaN", "R-32:NaN,R-125:50", 0, "", nil, 2},
		{"no identifier", ":100", 0, "", nil, 2},
		{"empty", "  ", 0, "", nil, 2},
		{"negative mass", "R-410A", -1, "", nil, 2},
		{"infinite mass", "R-410A", math.Inf(1), "", nil, 2},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			req, err := mixRequest(tc.spec, tc.mass)
			if code := lookupExitCode(err); code != tc.code {
				t.Fatalf("mixRequest(%q, %v): exit code %d (err %v); want %d", tc.spec, tc.mass, code, err, tc.code)
			}
			if tc.code != 0 {
				return
			}
			if req.GetNetMassKg() != wireOf(tc.mass) {
				t.Errorf("net mass %v; want %v", req.GetNetMassKg(), tc.mass)
			}
			if req.GetBlend() != tc.blend {
				t.Errorf("blend %q; want %q", req.GetBlend(), tc.blend)
			}
			got := req.GetComposition()
			if len(got) != len(tc.shares) {
				t.Fatalf("shares %v; want %v", got, tc.shares)
			}
			for i, s := range tc.shares {
				if got[i].GetIdentifier() != s.id || got[i].GetMassPercent() != wireOf(s.pct) {
					t.Errorf("share %d: %q %v; want %q %v", i, got[i].GetIdentifier(), got[i].GetMassPercent(), s.id, s.pct)
				}
			}
		})
	}
}

func TestMixtureGWPText(t *testing.T) {
	// Rounding as the published tables do it: half-up of the unrounded sum (UK government CO2-eq table:
	// R-410A 2087.5 -> 2088, R-407F 1824.5 -> 1825).
	// The sum arrives as an exact decimal and is shown in full beside the whole number.
	cases := map[string]string{
		"2087.5":      "2088 (2087.5)",
		"1824.5":      "1825 (1824.5)",
		"3985":        "3985",
		"3921.6":      "3922 (3921.6)",
		"1773.85":     "1774 (1773.85)",
		"465.075":     "465 (465.075)", // R-454B HFC-only sum
		"2424.795102": "2425 (2424.795102)",
		"0":           "0",
	}
	for in, want := range cases {
		if got := mixtureGWPText(in); got != want {
			t.Errorf("mixtureGWPText(%v) = %q; want %q", in, got, want)
		}
	}
}
