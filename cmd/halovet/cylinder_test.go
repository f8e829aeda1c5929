package main

import (
	"bytes"
	"context"
	"errors"
	"strings"
	"testing"

	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

func runCylinderReport(t *testing.T, ts *testServer, reading, declared string, massKg, unc float64, output string) string {
	t.Helper()
	req, err := cylinderRequest(reading, declared, massKg, unc, 0)
	if err != nil {
		t.Fatalf("cylinderRequest(%q): %v", reading, err)
	}
	var out bytes.Buffer
	if err := cylinderReport(context.Background(), ts.conn, &out, req, output); err != nil {
		t.Fatalf("cylinder %q: %v", reading, err)
	}
	return out.String()
}

func TestCylinderText(t *testing.T) {
	ts := startTestServer(t, nil)

	// HCFC-22 with 5 % air declared as R-407C. HCFC-22: Annex C Group I, ODP 0.055
	// (Montreal Protocol Annex C); 1000 kg of refrigerant → 0.055 ODP t; GWP 1810 listed in
	// Annex C (IPCC AR4 WG1 Table 2.14) → 1810 t × GWP, counted in ODP tonnes.
	s := runCylinderReport(t, ts, "R-22=95±0.5;air=5", "R-407C", 1000, 0, "text")
	lookupLineMatching(t, s, `^\s+declared\s+R-407C, 1000 kg$`)
	lookupLineMatching(t, s, `^\s+verdict\s+the reading CONTRADICTS the declared R-407C$`)
	lookupLineMatching(t, s, `^\s+non-condensable\s+5 % \(set aside before matching\); above 1\.5 %`)
	lookupLineMatching(t, s, `^\s+HCFC-22\s+C/I\s+100\s+1000\s+0\.055\s+0\.055\s+0\s+1810$`)
	lookupLineMatching(t, s, `^\s+HCFC-22\s+yes\s+0\.00\s+0\s+C/I\s+A1\s+—\s+—$`)
	// R-407C: HFC-32/125/134a 23/25/52 ±2 (ASHRAE 34-2019). The reading states no
	// uncertainty for HFC-32, so the default ±1 applies, renormalised with the 95 % of
	// refrigerant to ±1.0526: the band is 19.95 to 26.05 and 0 lies 19.95 below it.
	lookupLineMatching(t, s, `^\s+HFC-32\s+0\s+23\s+19\.95 to 26\.05\s+19\.95 points$`)
	lookupMustContain(t, s, decisionSupportNotice, "Safety cautions:")

	// R-32 and propane: the flammability classes are named (ASHRAE 34: R-32 A2L, R-290 A3).
	s = runCylinderReport(t, ts, "R-32=70;R-290=30", "", 0, 0, "text")
	lookupLineMatching(t, s, `^\s+contents\s+mixed or unknown: no standard blend fits$`)
	lookupMustContain(t, s, "HFC-32 (ASHRAE 34 class A2L: lower flammability)", "R-290 (ASHRAE 34 class A3: highly flammable)",
		"Contains flammable components", decisionSupportNotice)
	if strings.Contains(s, "verdict") {
		t.Errorf("a report without --declared gives a verdict:\n%s", s)
	}

	// R-404A inside its tolerance (ASHRAE 34-2019: 44/52/4, ±2/±1/±2) declared as R-404A.
	s = runCylinderReport(t, ts, "HFC-125=44.5;HFC-143a=51.5;HFC-134a=4", "R-404A", 10.9, 0.5, "text")
	lookupLineMatching(t, s, `^\s+verdict\s+the reading FITS the declared R-404A$`)
	if strings.Contains(s, "UNDECLARED") {
		t.Errorf("undeclared substances listed for a confirmed R-404A:\n%s", s)
	}
}

func TestCylinderJSON(t *testing.T) {
	ts := startTestServer(t, nil)
	s := runCylinderReport(t, ts, "R-12=100", "HFC-134a", 13.6, 0, "json")
	var resp halovetv1.AnalyseReadingResponse
	if err := wirejson.Unmarshal([]byte(s), &resp); err != nil {
		t.Fatalf("output is not an AnalyseReadingResponse: %v\n%s", err, s)
	}
	// CFC-12 ODP 1.0 (Montreal Protocol Annex A): 13.6 kg → 0.0136 ODP t.
	if h := resp.GetHidden(); len(h) != 1 || h[0].GetDesignation() != "CFC-12" || h[0].GetOdpTonnes() != "0.0136" {
		t.Errorf("hidden %v; want CFC-12 at 0.0136 ODP t", h)
	}
	if resp.GetDeclaredFits() {
		t.Error("HFC-134a fits pure CFC-12")
	}
}

func TestCylinderBadInput(t *testing.T) {
	for _, tc := range []struct {
		reading  string
		mass     float64
		unc      float64
		wantCode int
	}{
		{"R-22", 0, 0, 2},
		{"R-22=lots", 0, 0, 2},
		{"", 0, 0, 2},
		{"R-22=100", -5, 0, 2},
		{"R-22=100", 0, -1, 2},
	} {
		_, err := cylinderRequest(tc.reading, "", tc.mass, tc.unc, 0)
		var ee *exitError
		if !errors.As(err, &ee) || ee.code != tc.wantCode {
			t.Errorf("cylinderRequest(%q, %v, %v) = %v; want exit code %d", tc.reading, tc.mass, tc.unc, err, tc.wantCode)
		}
	}
	// The server's refusal names the field.
	ts := startTestServer(t, nil)
	req, err := cylinderRequest("R-22=50;R-32=20", "", 0, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	err = cylinderReport(context.Background(), ts.conn, &bytes.Buffer{}, req, "text")
	if err == nil || !strings.Contains(err.Error(), "InvalidArgument") || !strings.Contains(err.Error(), "components: ") || !strings.Contains(err.Error(), "sum to 70 %") {
		t.Errorf("error %v; want InvalidArgument naming components and the sum 70 %%", err)
	}
}
