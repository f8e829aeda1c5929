package service_test

import (
	"context"
	"regexp"
	"strings"
	"testing"

	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"

	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// binaryNoise is the trace binary floats leave in decimal figures (issue 15's pattern):
// seven zeros or seven nines and a digit after the point.
var binaryNoise = regexp.MustCompile(`\d\.\d*0000000\d|\d\.\d*9999999\d`)

// TestCatalogueAnswersAreExact asks every catalogue and analysis RPC about every entry of
// the catalogue and scans the protobuf JSON of each answer for binary-float noise. The
// masses are chosen to provoke it in float64 arithmetic (13.6 kg × 44 % × 0.055 and the
// like); the analysis readings are each blend's nominal composition shifted by 0.3 points
// with 1.7 % air, so that renormalisation divides.
func TestCatalogueAnswersAreExact(t *testing.T) {
	conn, _ := startTestServer(t)
	cat := halovetv1.NewCatalogueServiceClient(conn)
	an := halovetv1.NewAnalysisServiceClient(conn)
	ctx := context.Background()
	answers := 0
	scan := func(what string, m proto.Message) {
		t.Helper()
		answers++
		b, err := protojson.Marshal(m)
		if err != nil {
			t.Fatalf("%s: protojson: %v", what, err)
		}
		if hit := binaryNoise.FindString(string(b)); hit != "" {
			t.Errorf("%s: answer shows binary-float noise %q", what, hit)
		}
	}

	var entries []*halovetv1.CatalogueEntry
	for tok := ""; ; {
		resp, err := cat.ListEntries(ctx, &halovetv1.ListEntriesRequest{PageSize: 50, PageToken: tok})
		if err != nil {
			t.Fatalf("ListEntries: %v", err)
		}
		scan("ListEntries page", resp)
		entries = append(entries, resp.GetEntries()...)
		if tok = resp.GetNextPageToken(); tok == "" {
			break
		}
	}
	if len(entries) < 100 {
		t.Fatalf("ListEntries gave %d entries; the seed catalogue holds well over 100", len(entries))
	}
	for _, e := range entries {
		d := e.GetSubstance().GetDesignation() + e.GetBlend().GetDesignation()
		ge, err := cat.GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: d})
		if err != nil {
			t.Fatalf("GetEntry %s: %v", d, err)
		}
		scan("GetEntry "+d, ge)
		r, err := cat.ResolveIdentifier(ctx, &halovetv1.ResolveIdentifierRequest{Identifier: d})
		if err != nil {
			t.Fatalf("ResolveIdentifier %s: %v", d, err)
		}
		scan("ResolveIdentifier "+d, r)
		for _, mass := range []string{"", "1", "13.6", "0.37", "1000"} {
			ev, err := cat.EvaluateMixture(ctx, &halovetv1.EvaluateMixtureRequest{
				Blend: d, NetMassKg: mass})
			if err != nil {
				t.Fatalf("EvaluateMixture %s %s kg: %v", d, mass, err)
			}
			scan("EvaluateMixture "+d+" "+mass+" kg", ev)
		}
		b := e.GetBlend()
		if b == nil {
			continue
		}
		req := &halovetv1.AnalyseReadingRequest{Declared: d, NetMassKg: "13.6", NonCondensablePercent: "1.7"}
		largest := 0 // the air is taken from the largest share
		for i, c := range b.GetComponents() {
			if exact.MustParse(c.GetMassPercent()).Cmp(exact.MustParse(b.GetComponents()[largest].GetMassPercent())) > 0 {
				largest = i
			}
		}
		for i, c := range b.GetComponents() {
			pct := exact.MustParse(c.GetMassPercent())
			if len(b.GetComponents()) > 1 {
				shift := exact.MustParse("0.3")
				if i%2 == 1 && pct.Cmp(exact.MustParse("0.3")) > 0 {
					shift = shift.Neg()
				}
				pct = pct.Add(shift)
			}
			if i == largest {
				pct = pct.Sub(exact.MustParse("1.7"))
			}
			req.Components = append(req.Components, &halovetv1.MeasuredShare{Identifier: c.GetDesignation(), MassPercent: pct.String()})
		}
		ar, err := an.AnalyseReading(ctx, req)
		if err != nil {
			t.Fatalf("AnalyseReading of %s shifted: %v", d, err)
		}
		scan("AnalyseReading "+d, ar)
	}
	t.Logf("%d answers over %d entries scanned", answers, len(entries))
}

// HFC-134a: ODP present as "0", molar mass exactly 102.03 g/mol.
func TestCatalogueEntryHFC134aFigures(t *testing.T) {
	conn, _ := startTestServer(t)
	cat := halovetv1.NewCatalogueServiceClient(conn)
	resp, err := cat.GetEntry(context.Background(), &halovetv1.GetEntryRequest{Designation: "HFC-134a"})
	if err != nil {
		t.Fatalf("GetEntry HFC-134a: %v", err)
	}
	b, err := protojson.Marshal(resp)
	if err != nil {
		t.Fatal(err)
	}
	js := string(b)
	// source: Montreal Protocol Annex F lists HFCs with a GWP and no ODP: ODP 0, present.
	if !strings.Contains(js, `"odp":"0"`) {
		t.Errorf("HFC-134a answer has no \"odp\":\"0\": %s", js)
	}
	// source: IUPAC standard atomic weights, abridged (conventional) values C 12.011,
	// H 1.008, F 18.998: C2H2F4 = 2×12.011 + 2×1.008 + 4×18.998 = 102.03 g/mol.
	if !strings.Contains(js, `"molarMassGPerMol":"102.03"`) {
		t.Errorf("HFC-134a answer has no \"molarMassGPerMol\":\"102.03\": %s", js)
	}
	// A figure that does not apply is absent: HFC-134a has one ODP, not a range.
	if strings.Contains(js, "odpRangeLow") || strings.Contains(js, "odpRangeHigh") {
		t.Errorf("HFC-134a answer carries an ODP range it does not have: %s", js)
	}
}

// Request figures are decimals; anything else is INVALID_ARGUMENT naming the field.
func TestEvaluateMixtureRejectsNonDecimalFigures(t *testing.T) {
	conn, _ := startTestServer(t)
	cat := halovetv1.NewCatalogueServiceClient(conn)
	for _, tc := range []struct{ name, mass, pct, field string }{
		{"exponent mass", "1e3", "100", "net_mass_kg"},
		{"comma mass", "12,5", "100", "net_mass_kg"},
		{"negative mass", "-1", "100", "net_mass_kg"},
		{"share with exponent", "1", "1e2", "composition[0].mass_percent"},
		{"share missing", "1", "", "composition[0].mass_percent"},
		{"share with too many digits", "1", "99.99999999999999999", "composition[0].mass_percent"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := cat.EvaluateMixture(context.Background(), &halovetv1.EvaluateMixtureRequest{NetMassKg: tc.mass,
				Composition: []*halovetv1.MixtureShare{{Identifier: "HCFC-22", MassPercent: tc.pct}}})
			if err == nil || !strings.Contains(err.Error(), tc.field) {
				t.Errorf("error %v; want INVALID_ARGUMENT naming %s", err, tc.field)
			}
		})
	}
}
