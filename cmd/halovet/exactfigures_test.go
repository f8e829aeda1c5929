package main

import (
	"context"
	"os"
	"regexp"
	"strings"
	"testing"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// issue15Noise is the pattern issue 15 names for binary-float noise in decimal figures.
var issue15Noise = regexp.MustCompile(`\d\.\d*0000000\d|\d\.\d*9999999\d`)

// TestCatalogueVerbsMachineOutputIsExact runs lookup over every catalogue entry and mix
// over every blend at 13.6 kg (a mass whose products float64 gets wrong), each with
// --output json and --output csv, and scans what they print for binary-float noise.
func TestCatalogueVerbsMachineOutputIsExact(t *testing.T) {
	ts := startTestServer(t, nil)
	cat := halovetv1.NewCatalogueServiceClient(ts.conn)
	var subs, blends []string
	for tok := ""; ; {
		resp, err := cat.ListEntries(context.Background(), &halovetv1.ListEntriesRequest{PageSize: 500, PageToken: tok})
		if err != nil {
			t.Fatalf("ListEntries: %v", err)
		}
		for _, e := range resp.GetEntries() {
			if b := e.GetBlend(); b != nil {
				blends = append(blends, b.GetDesignation())
			} else {
				subs = append(subs, e.GetSubstance().GetDesignation())
			}
		}
		if tok = resp.GetNextPageToken(); tok == "" {
			break
		}
	}
	if len(subs) < 50 || len(blends) < 50 {
		t.Fatalf("%d substances and %d blends listed; the seed catalogue holds more", len(subs), len(blends))
	}
	all := append(append([]string{}, subs...), blends...)
	for _, out := range []string{"json", "csv"} {
		args := append([]string{"lookup", "--server", ts.addr, "--output", out}, all...)
		code, stdout, stderr := runCaptured(t, args...)
		if code != exitOK {
			t.Fatalf("lookup of every entry --output %s: exit %d\n%s", out, code, stderr)
		}
		if hit := issue15Noise.FindString(stdout); hit != "" {
			t.Errorf("lookup --output %s shows binary-float noise %q", out, hit)
		}
		// source: IUPAC standard atomic weights (conventional values): HFC-134a 102.03 g/mol.
		if !strings.Contains(stdout, "102.03") || strings.Contains(stdout, "102.030") {
			t.Errorf("lookup --output %s does not show HFC-134a's molar mass as 102.03", out)
		}
		for _, b := range blends {
			code, stdout, stderr := runCaptured(t, "mix", b, "--mass-kg", "13.6", "--server", ts.addr, "--output", out)
			if code != exitOK {
				t.Fatalf("mix %s --mass-kg 13.6 --output %s: exit %d\n%s", b, out, code, stderr)
			}
			if hit := issue15Noise.FindString(stdout); hit != "" {
				t.Errorf("mix %s --output %s shows binary-float noise %q", b, out, hit)
			}
		}
	}
}

// TestRegisterVerbsMachineOutputIsExact records, on the demo's register, records whose
// figures float64 gets wrong (0.3 kg of HCFC-22: 0.0000165 ODP t, where float64 gives
// 1.6499999999999998e-05; 0.1 kg of R-410A: 0.20875 CO2-eq t, float64 0.20875000000000002),
// then scans every machine-readable output of check, licences, shipments and history for
// binary-float noise, and finds the unused quota line's drawn amount present as 0.
func TestRegisterVerbsMachineOutputIsExact(t *testing.T) {
	addr := startDemoServerAddr(t)
	dir := t.TempDir()
	// INVENTED records on the demo's licence XA-IMP-2026-002 (HCFC-22 in metric t, F/I in
	// CO2-eq t).
	batch := dir + "/noisy.csv"
	if err := os.WriteFile(batch, []byte("record_key,direction,company_id,licence_number,partner_country,declaration_date,substance,total_net_quantity,quantity_unit,purpose\n"+
		"EXACT-1,import,XA-1002,XA-IMP-2026-002,XB,2026-06-01,HCFC-22,0.3,kg,laboratory\n"+
		"EXACT-2,import,XA-1002,XA-IMP-2026-002,XB,2026-06-01,R-410A,0.1,kg,laboratory\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	scan := func(what, out string) {
		t.Helper()
		if hit := issue15Noise.FindString(out); hit != "" {
			t.Errorf("%s shows binary-float noise %q", what, hit)
		}
	}
	for _, rep := range []string{"report.csv", "report.jsonl"} {
		code, stdout, stderr := runCaptured(t, "check", batch, "--server", addr, "--output", "json", "--report", dir+"/"+rep)
		if code != exitOK {
			t.Fatalf("check --report %s: exit %d\n%s%s", rep, code, stdout, stderr)
		}
		scan("check --output json", stdout)
		b, err := os.ReadFile(dir + "/" + rep)
		if err != nil {
			t.Fatal(err)
		}
		scan("check --report "+rep, string(b))
		// 0.3 kg × ODP 0.055 / 1000 (Montreal Protocol Annex C Group I); 0.1 kg R-410A:
		// 0.00005 t × 675 + 0.00005 t × 3500 (Annex F GWPs, ASHRAE 34 composition 50/50).
		for _, want := range []string{"0.0000165", "0.20875"} {
			if !strings.Contains(string(b), want) {
				t.Errorf("check --report %s does not show %s:\n%s", rep, want, b)
			}
		}
	}
	if code, stdout, stderr := runCaptured(t, "check", batch, "--server", addr, "--record", "--output", "csv"); code != exitOK {
		t.Fatalf("check --record: exit %d\n%s%s", code, stdout, stderr)
	}
	for _, args := range [][]string{
		{"licences", "--year", "2026", "--output", "json"},
		{"licences", "--year", "2026", "--output", "csv"},
		{"shipments", "list", "--output", "json"},
		{"shipments", "list", "--output", "csv"},
		{"shipments", "list", "--output", "jsonl"},
		{"shipments", "show", "1", "--output", "json"},
		{"history", "XA-IMP-2026-002", "--output", "json"},
	} {
		code, stdout, stderr := runCaptured(t, append(args, "--server", addr)...)
		if code != exitOK {
			t.Fatalf("%s: exit %d\n%s", strings.Join(args, " "), code, stderr)
		}
		scan(strings.Join(args, " "), stdout)
		switch strings.Join(args[:len(args)-1], " ") {
		case "licences --year 2026 --output":
			// The demo's XA-IMP-2026-005 is suspended and draws nothing: 40000 allocated, "0" drawn.
			if args[len(args)-1] == "json" && !strings.Contains(stdout, `"drawn_amount": "0"`) {
				t.Errorf("licences --output json shows no unused line's drawn_amount as \"0\":\n%s", stdout)
			}
			if args[len(args)-1] == "csv" && !strings.Contains(stdout, ",40000,0,40000,") {
				t.Errorf("licences --output csv shows no unused line as 40000,0,40000:\n%s", stdout)
			}
		case "shipments list --output":
			if args[len(args)-1] == "json" && (!strings.Contains(stdout, `"odp_tonnes": "0.0000165"`) || !strings.Contains(stdout, `"co2e_tonnes": "0.20875"`)) {
				t.Errorf("shipments list --output json does not show EXACT-1's 0.0000165 ODP t and EXACT-2's 0.20875 CO2-eq t")
			}
		}
	}
}
