package main

import (
	"context"
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
