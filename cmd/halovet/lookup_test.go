package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"io"
	"os"
	"regexp"
	"strings"
	"testing"

	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// lookupExitCode maps a verb's error to the exit code run gives it.
func lookupExitCode(err error) int {
	var ee *exitError
	switch {
	case err == nil, errors.Is(err, errHelpShown):
		return 0
	case errors.As(err, &ee):
		return ee.code
	}
	return 1
}

// mustContain fails the test for each wanted text missing from out.
func lookupMustContain(t *testing.T, out string, want ...string) {
	t.Helper()
	for _, w := range want {
		if !strings.Contains(out, w) {
			t.Errorf("output lacks %q:\n%s", w, out)
		}
	}
}

// lineMatching fails unless some line of out matches the pattern.
func lookupLineMatching(t *testing.T, out, pattern string) {
	t.Helper()
	re := regexp.MustCompile(pattern)
	for _, l := range strings.Split(out, "\n") {
		if re.MatchString(l) {
			return
		}
	}
	t.Errorf("no output line matches %q:\n%s", pattern, out)
}

func TestLookupTextSubstances(t *testing.T) {
	conn := startTestServer(t, nil).conn
	var out bytes.Buffer
	if err := lookupReport(context.Background(), conn, &out, []string{"R22", "HCFC-133"}, "text"); err != nil {
		t.Fatalf("lookup R22 HCFC-133: %v", err)
	}
	s := out.String()
	lookupLineMatching(t, s, `^HCFC-22 .*from "R22", by synonym R-22`)
	lookupLineMatching(t, s, `^\s+ODP\s+0\.055$`)                 // source: Montreal Protocol Annex C Group I, HCFC-22 0.055
	lookupLineMatching(t, s, `^\s+Annex/Group\s+C/I `)            // source: Montreal Protocol Annex C Group I
	lookupLineMatching(t, s, `^\s+CAS number\s+75-45-6$`)         // source: testdata/reference/halocarbons.csv (CAS of HCFC-22)
	lookupLineMatching(t, s, `^\s+GWP \(100-year\)\s+MP\s+1810 `) // source: Kigali Amendment Annex C Group I GWP column
	lookupLineMatching(t, s, `^\s+AR5\s+1760$`)                   // source: IPCC AR5 WG1 Table 8.A.1 (halocarbons.csv gwp100_ar5)
	lookupLineMatching(t, s, `^\s+HS 2022\s+2903\.71$`)           // source: WCO HS 2022 subheading 2903.71
	lookupLineMatching(t, s, `^\s+safety class\s+A1 `)            // source: ASHRAE 34 (from memory, as the seed says)
	lookupLineMatching(t, s, `^\s+lifetime\s+11\.9 years$`)       // source: WMO 2018 via IPCC AR6 Table 7.SM.7 (halocarbons.csv)

	// HCFC-133 is an isomer group with an ODP range; its HS subheading is shared.
	// source: Montreal Protocol Annex C Group I, C2H2F3Cl, 3 isomers, ODP 0.02-0.06.
	lookupLineMatching(t, s, `^\s+ODP\s+0\.06 \(upper end of the Annex range 0\.02–0\.06`)
	lookupLineMatching(t, s, `^\s+isomers\s+3 `)
	// source: HS 2022 2903.79 "other" is shared with uncontrolled compounds (WCO HS 2022 text).
	lookupLineMatching(t, s, `^\s+HS 2022\s+2903\.79\s+\(shared subheading: code alone does not prove identity\)`)
	lookupLineMatching(t, s, `^\s+CAS number\s+— \(none: the Annex entry is an isomer group\)`)

	lookupMustContain(t, s, "\n--\n"+decisionSupportNotice+"\n", "Safety cautions:", "Asphyxiation", "No ASHRAE 34 safety class is recorded")
	// The footer closes the report: after it come only caution lines.
	footer := s[strings.LastIndex(s, "\n--\n")+1:]
	if !strings.HasPrefix(footer, "--\n"+decisionSupportNotice+"\nSafety cautions:\n") || strings.Contains(footer, "ODP") {
		t.Errorf("the report does not end with the footer; its last part is:\n%s", footer)
	}
}

func TestLookupTextBlend(t *testing.T) {
	conn := startTestServer(t, nil).conn
	var out bytes.Buffer
	if err := lookupReport(context.Background(), conn, &out, []string{"410a"}, "text"); err != nil {
		t.Fatalf("lookup 410a: %v", err)
	}
	s := out.String()
	lookupLineMatching(t, s, `^R-410A `)
	lookupLineMatching(t, s, `^\s+kind\s+blend \(zeotrope`)
	// source: ASHRAE 34-2019 via the reference blends.csv: R-410A is HFC-32/HFC-125 50/50,
	// tolerances +0.5/-1.5 and +1.5/-0.5.
	lookupLineMatching(t, s, `^\s+HFC-32\s+50\s+\+0\.5/-1\.5\s+F/I$`)
	lookupLineMatching(t, s, `^\s+HFC-125\s+50\s+\+1\.5/-0\.5\s+F/I$`)
	// source: UK government CO2-eq table (testdata/reference/blends.csv): R-410A 2088, half-up of 2087.5.
	lookupLineMatching(t, s, `^\s+AR4\s+2088 \(2087\.5\)\s+2088 \(2087\.5\)$`)
	lookupLineMatching(t, s, `^\s+MP \(Protocol annex values\)\s+—\s+2088 \(2087\.5\)$`)
	lookupMustContain(t, s, "all components", "Annex F only (as the Protocol counts)", decisionSupportNotice)
	// WCO HS 2022 3827.63: an HFC mixture not in 3827.61-3827.62 with 40 % or more HFC-125
	// (R-410A: 50 %, below the 55 % of 3827.62).
	lookupLineMatching(t, s, `^\s+HS 2022\s+3827\.63`)
}

func TestLookupAmbiguousAndUnknown(t *testing.T) {
	conn := startTestServer(t, nil).conn
	var out bytes.Buffer
	err := lookupReport(context.Background(), conn, &out, []string{"2903.45", "R-4O4A", "R-22", "75-45-7"}, "text")
	if code := lookupExitCode(err); code != 1 {
		t.Fatalf("exit code %d (err %v); want 1 when identifiers do not resolve", code, err)
	}
	lookupMustContain(t, err.Error(), `3 of 4`, `"2903.45"`, `"R-4O4A"`, `"75-45-7"`)
	s := out.String()
	// source: HS 2022 subheading 2903.45 holds HFC-134a and HFC-134 (WCO HS 2022 text);
	// CAS numbers from halocarbons.csv.
	lookupLineMatching(t, s, `^"2903\.45": ambiguous, 2 candidates$`)
	lookupLineMatching(t, s, `^\s+HFC-134\s+substance\s+F/I\s+HS code\s+HS2022 2903\.45\s+0\.50$`)
	lookupLineMatching(t, s, `^\s+HFC-134a\s+substance\s+F/I\s+HS code\s+HS2022 2903\.45\s+0\.50$`)
	lookupMustContain(t, s, "HFC-134 (CAS 359-35-3)", "HFC-134a (CAS 811-97-2)")
	lookupLineMatching(t, s, `^"R-4O4A": no catalogue entry$`)
	lookupLineMatching(t, s, `Did you mean: R-404A`)
	lookupLineMatching(t, s, `^"75-45-7": no catalogue entry$`)
	lookupMustContain(t, s, "check digit", "75-45-6 (HCFC-22)")
	// The identifier that resolved is still reported in full.
	lookupLineMatching(t, s, `^HCFC-22 `)
	lookupMustContain(t, s, decisionSupportNotice)
}

func TestLookupJSONLines(t *testing.T) {
	conn := startTestServer(t, nil).conn
	var out bytes.Buffer
	err := lookupReport(context.Background(), conn, &out, []string{"R-22", "2903.45", "R-404A"}, "json")
	if code := lookupExitCode(err); code != 1 {
		t.Fatalf("exit code %d; want 1 (2903.45 is ambiguous)", code)
	}
	type record struct {
		Identifier string          `json:"identifier"`
		Resolution json.RawMessage `json:"resolution"`
		Entry      json.RawMessage `json:"entry"`
		Evaluation json.RawMessage `json:"evaluation"`
	}
	var recs []record
	sc := bufio.NewScanner(&out)
	sc.Buffer(nil, 1<<20)
	for sc.Scan() {
		var r record
		if err := json.Unmarshal(sc.Bytes(), &r); err != nil {
			t.Fatalf("line %d is not a JSON object: %v\n%s", len(recs)+1, err, sc.Text())
		}
		recs = append(recs, r)
	}
	if len(recs) != 3 {
		t.Fatalf("%d JSON lines; want one per identifier (3)", len(recs))
	}

	// resolved, with entry and evaluation.
	var res halovetv1.ResolveIdentifierResponse
	var entry halovetv1.GetEntryResponse
	var ev halovetv1.EvaluateMixtureResponse
	if err := wirejson.Unmarshal(recs[0].Resolution, &res); err != nil {
		t.Fatalf("resolution: %v", err)
	}
	if err := wirejson.Unmarshal(recs[0].Entry, &entry); err != nil {
		t.Fatalf("entry: %v", err)
	}
	if err := wirejson.Unmarshal(recs[0].Evaluation, &ev); err != nil {
		t.Fatalf("evaluation: %v", err)
	}
	if recs[0].Identifier != "R-22" || res.GetCandidates()[0].GetDesignation() != "HCFC-22" {
		t.Errorf("record 1: identifier %q, best candidate %v; want R-22 -> HCFC-22", recs[0].Identifier, res.GetCandidates())
	}
	// source: Montreal Protocol Annex C Group I, HCFC-22 ODP 0.055.
	if s := entry.GetSubstance(); s.GetOdp() != "0.055" || s.GetAnnexGroup() != "C/I" {
		t.Errorf("entry ODP %v group %q; want 0.055, C/I", s.GetOdp(), s.GetAnnexGroup())
	}
	if len(ev.GetCautions()) == 0 {
		t.Error("evaluation carries no cautions; every refrigerant has some (asphyxiation at least)")
	}

	// 2903.45: ambiguous, resolution only.
	res.Reset()
	if err := wirejson.Unmarshal(recs[1].Resolution, &res); err != nil {
		t.Fatalf("resolution 2: %v", err)
	}
	if !res.GetAmbiguous() || len(res.GetCandidates()) != 2 || recs[1].Entry != nil || recs[1].Evaluation != nil {
		t.Errorf("record 2: ambiguous %v, %d candidates, entry %s; want ambiguous, 2 candidates, no entry",
			res.GetAmbiguous(), len(res.GetCandidates()), recs[1].Entry)
	}

	// R-404A: a blend with its GWP figures.
	entry.Reset()
	ev.Reset()
	if err := wirejson.Unmarshal(recs[2].Entry, &entry); err != nil {
		t.Fatalf("entry 3: %v", err)
	}
	if err := wirejson.Unmarshal(recs[2].Evaluation, &ev); err != nil {
		t.Fatalf("evaluation 3: %v", err)
	}
	if len(entry.GetBlend().GetComponents()) != 3 {
		t.Errorf("R-404A entry %v; want a blend of 3 components", entry.GetBlend())
	}
	found := false
	for _, g := range ev.GetGwps() {
		// source: UK government CO2-eq table (testdata/reference/blends.csv): R-404A 3922 from 3921.6.
		if g.GetGwpSet() == halovetv1.GwpSet_GWP_SET_IPCC_AR4 && g.GetConvention() == halovetv1.GwpConvention_GWP_CONVENTION_ALL_COMPONENTS {
			found = g.GetGwp_100Yr() == "3921.6"
		}
	}
	if !found {
		t.Errorf("R-404A evaluation GWPs %v; want AR4 all-components 3921.6", ev.GetGwps())
	}
}

// runCaptured runs the halovet command line in this process and returns its exit code,
// standard output and standard error. It swaps os.Stdout and os.Stderr, so tests that use
// it must not run in parallel.
func runCaptured(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	read := func(f *os.File, into *bytes.Buffer, done chan<- struct{}) {
		_, _ = io.Copy(into, f)
		close(done)
	}
	outR, outW, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	errR, errW, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	outDone, errDone := make(chan struct{}), make(chan struct{})
	go read(outR, &stdout, outDone)
	go read(errR, &stderr, errDone)
	oldOut, oldErr := os.Stdout, os.Stderr
	os.Stdout, os.Stderr = outW, errW
	code := run(context.Background(), args)
	os.Stdout, os.Stderr = oldOut, oldErr
	_ = outW.Close()
	_ = errW.Close()
	<-outDone
	<-errDone
	return code, stdout.String(), stderr.String()
}

func TestLookupAndMixExitCodes(t *testing.T) {
	addr := startTestServer(t, nil).addr
	cases := []struct {
		name   string
		args   []string
		code   int
		stdout string // must occur in standard output
		stderr string // must occur in standard error
	}{
		{"lookup resolves", []string{"lookup", "--server", addr, "R-22"}, 0, "HCFC-22", ""},
		{"lookup flags after identifiers", []string{"lookup", "R-22", "--server", addr, "--output", "json"}, 0, `"identifier":"R-22"`, ""},
		{"lookup unknown", []string{"lookup", "--server", addr, "R-4O4A"}, 1, "Did you mean", "did not resolve"},
		{"lookup ambiguous", []string{"lookup", "--server", addr, "R-22", "2903.45"}, 1, "ambiguous", "1 of 2"},
		{"lookup without identifiers", []string{"lookup", "--server", addr}, 2, "", "IDENTIFIER"},
		{"lookup bad output", []string{"lookup", "--server", addr, "--output", "yaml", "R-22"}, 2, "", "--output"},
		{"lookup help", []string{"lookup", "--help"}, 0, "Examples:", ""},
		{"mix blend, mass after SPEC", []string{"mix", "--server", addr, "R-410A", "--mass-kg", "10"}, 0, "Mixture R-410A, 10 kg", ""},
		{"mix sum off", []string{"mix", "--server", addr, "R-32:50,R-125:49.5"}, 2, "", "99.5"},
		{"mix unknown identifier", []string{"mix", "--server", addr, "R-32:50,R-12x5:50"}, 2, "", "R-125"},
		{"mix malformed SPEC", []string{"mix", "--server", addr, "R-32:50,R-125"}, 2, "", "MASS_PERCENT"},
		{"mix negative mass", []string{"mix", "--server", addr, "--mass-kg", "-3", "R-410A"}, 2, "", "--mass-kg"},
		{"mix two SPECs", []string{"mix", "--server", addr, "R-410A", "R-404A"}, 2, "", "exactly one SPEC"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			code, stdout, stderr := runCaptured(t, tc.args...)
			if code != tc.code {
				t.Errorf("halovet %s: exit code %d; want %d\nstdout:\n%s\nstderr:\n%s", strings.Join(tc.args, " "), code, tc.code, stdout, stderr)
			}
			if !strings.Contains(stdout, tc.stdout) {
				t.Errorf("stdout lacks %q:\n%s", tc.stdout, stdout)
			}
			if !strings.Contains(stderr, tc.stderr) {
				t.Errorf("stderr lacks %q:\n%s", tc.stderr, stderr)
			}
		})
	}
}

func TestReportFooter(t *testing.T) {
	long := "Lower flammability (ASHRAE 34 class A2L): can ignite at high concentration; use equipment, " +
		"tools and charge limits approved for class A2L refrigerants and keep ignition sources away."
	got := reportFooter([]string{
		"Asphyxiation: ventilate.",
		"",
		long,
		"Asphyxiation:   ventilate.", // the same caution, spaced differently
		"Figures are decision support: the treaty text, national law and the national authority prevail.",
		"Frostbite: wear gloves.",
		"Asphyxiation: ventilate.",
	})
	lines := strings.Split(strings.TrimSuffix(got, "\n"), "\n")
	if lines[0] != "--" || lines[1] != decisionSupportNotice || lines[2] != "Safety cautions:" {
		t.Fatalf("footer starts %q; want the rule, the notice on one line, then the cautions heading", lines[:3])
	}
	if !strings.HasSuffix(got, "\n") {
		t.Error("footer does not end with a newline")
	}
	var items []string
	for _, l := range lines[3:] {
		if len(l) > footerWidth {
			t.Errorf("line of %d bytes %q; want at most %d", len(l), l, footerWidth)
		}
		switch {
		case strings.HasPrefix(l, "  - "):
			items = append(items, strings.TrimPrefix(l, "  - "))
		case strings.HasPrefix(l, "    ") && len(items) > 0:
			items[len(items)-1] += " " + strings.TrimSpace(l)
		default:
			t.Errorf("unexpected footer line %q", l)
		}
	}
	want := []string{"Asphyxiation: ventilate.", long, "Frostbite: wear gloves."}
	if strings.Join(items, "|") != strings.Join(want, "|") {
		t.Errorf("cautions %q; want %q (distinct, in order, no second decision-support line)", items, want)
	}

	if got := reportFooter(nil); got != "--\n"+decisionSupportNotice+"\n" {
		t.Errorf("footer without cautions %q; want only the rule and the notice", got)
	}
}
