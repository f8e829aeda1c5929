package service_test

import (
	"context"
	"math"
	"strings"
	"testing"

	"google.golang.org/grpc/codes"

	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// Integration tests of CatalogueService.EvaluateMixture: blend GWPs under each set and
// convention, ODP tonnes, and the rejections.

// roundHalfUp rounds a blend GWP the way the published tables do (the UK government CO2-eq
// table rounds half-up the unrounded sum; R-410A 2087.5 -> 2088). The small offset absorbs binary
// floating-point error in sums such as 0.5*675 + 0.5*3500.
func roundHalfUp(x float64) float64 { return math.Floor(x + 0.5 + 1e-9) }

// wireNum reads a wire figure (a decimal string) for a comparison with a rounded value.
func wireNum(t *testing.T, s string) float64 {
	t.Helper()
	d, err := exact.Parse(s)
	if err != nil {
		t.Fatalf("wire figure %q: %v", s, err)
	}
	return d.Float64()
}

// catalogueGWPFigure finds a mixture GWP figure by set and convention.
func catalogueGWPFigure(resp *halovetv1.EvaluateMixtureResponse, set halovetv1.GwpSet, convention halovetv1.GwpConvention) (*halovetv1.GwpFigure, bool) {
	for _, g := range resp.GetGwps() {
		if g.GetGwpSet() == set && g.GetConvention() == convention {
			return g, true
		}
	}
	return nil, false
}

func TestEvaluateMixtureBlendGWP(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()

	cases := []struct {
		blend string
		gwp   float64 // AR4 basis, rounded half-up
	}{
		// source: EU Regulation 517/2014 Annex IV method, values as published in the UK
		// government CO2-eq table (testdata/reference/blends.csv): R-404A 3922, R-410A 2088, R-507A 3985.
		{"R-404A", 3922},
		{"R-410A", 2088},
		{"R-507A", 3985},
		// source: EU F-gas figure from memory; no published table was found for it (blends.csv
		// gwp_ar4_published is empty), and its computed HFC-only sum 1773.85 rounds half-up to 1774.
		{"R-407C", 1774},
	}
	for _, tc := range cases {
		t.Run(tc.blend, func(t *testing.T) {
			resp, err := client.EvaluateMixture(ctx, &halovetv1.EvaluateMixtureRequest{
				Blend: tc.blend, NetMassKg: "1000"})
			if err != nil {
				t.Fatalf("EvaluateMixture %s: %v", tc.blend, err)
			}
			if resp.GetDesignation() != tc.blend {
				t.Errorf("designation %q; want %s", resp.GetDesignation(), tc.blend)
			}
			for _, conv := range []halovetv1.GwpConvention{halovetv1.GwpConvention_GWP_CONVENTION_ALL_COMPONENTS, halovetv1.GwpConvention_GWP_CONVENTION_ANNEX_F_ONLY} {
				g, ok := catalogueGWPFigure(resp, halovetv1.GwpSet_GWP_SET_IPCC_AR4, conv)
				if !ok {
					t.Fatalf("no AR4 %s figure in %v", conv, resp.GetGwps())
				}
				if roundHalfUp(wireNum(t, g.GetGwp_100Yr())) != tc.gwp || !g.GetComplete() {
					t.Errorf("AR4 %s GWP %v (complete %v); want it to round to %v, complete", conv, g.GetGwp_100Yr(), g.GetComplete(), tc.gwp)
				}
			}
			mp, ok := catalogueGWPFigure(resp, halovetv1.GwpSet_GWP_SET_PROTOCOL_ANNEXES, halovetv1.GwpConvention_GWP_CONVENTION_ANNEX_F_ONLY)
			if !ok || roundHalfUp(wireNum(t, mp.GetGwp_100Yr())) != tc.gwp {
				t.Errorf("Protocol (MP) annex-f-only GWP %v; want it to round to %v (Annex F values equal AR4)", mp.GetGwp_100Yr(), tc.gwp)
			}
			// One metric tonne: CO2-eq tonnes equal the unrounded Annex-F GWP (Art. 3 para 2:
			// CO2-eq tonnes = metric tonnes x GWP).
			if resp.GetCo2ETonnes() != mp.GetGwp_100Yr() {
				t.Errorf("CO2-eq tonnes of 1000 kg %v; want exactly the mixture GWP %v", resp.GetCo2ETonnes(), mp.GetGwp_100Yr())
			}
			if resp.GetOdpTonnes() != "0" {
				t.Errorf("ODP tonnes %v; want 0 for an HFC-only blend", resp.GetOdpTonnes())
			}
			sumKg := exact.Zero
			for _, c := range resp.GetComponents() {
				sumKg = sumKg.Add(exact.MustParse(c.GetMassKg()))
			}
			if sumKg.String() != "1000" {
				t.Errorf("component masses sum to %v kg; want 1000", sumKg)
			}
		})
	}

	t.Run("ad-hoc 50/50 R-32/R-125 equals R-410A", func(t *testing.T) {
		// source: ASHRAE 34 (reference blends.csv): R-410A is HFC-32/HFC-125 50/50.
		resp, err := client.EvaluateMixture(ctx, &halovetv1.EvaluateMixtureRequest{
			Composition: []*halovetv1.MixtureShare{{Identifier: "R-32", MassPercent: "50"}, {Identifier: "R-125", MassPercent: "50"}}})
		if err != nil {
			t.Fatalf("EvaluateMixture R-32:50,R-125:50: %v", err)
		}
		g, ok := catalogueGWPFigure(resp, halovetv1.GwpSet_GWP_SET_IPCC_AR4, halovetv1.GwpConvention_GWP_CONVENTION_ANNEX_F_ONLY)
		if resp.GetDesignation() != "custom" || !ok || roundHalfUp(wireNum(t, g.GetGwp_100Yr())) != 2088 {
			t.Errorf("designation %q, AR4 annex-f-only %v; want custom and 2088 (as R-410A)", resp.GetDesignation(), g)
		}
	})
}

func TestEvaluateMixtureODPTonnes(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	resp, err := client.EvaluateMixture(context.Background(), &halovetv1.EvaluateMixtureRequest{
		Composition: []*halovetv1.MixtureShare{{Identifier: "HCFC-141b", MassPercent: "100"}},
		NetMassKg:   "1000"})
	if err != nil {
		t.Fatalf("EvaluateMixture 1000 kg HCFC-141b: %v", err)
	}
	// source: Montreal Protocol Annex C Group I, HCFC-141b ODP 0.11; 1 t x 0.11 = 0.11 ODP t.
	if resp.GetOdpTonnes() != "0.11" {
		t.Errorf("ODP tonnes %v; want 0.11", resp.GetOdpTonnes())
	}
	// An HCFC counts in ODP tonnes in its own group, not in CO2-eq (Art. 3 para 1(a) and para 2; Art. 1 para 4).
	if resp.GetCo2ETonnes() != "0" {
		t.Errorf("Protocol CO2-eq tonnes %v; want 0 for an HCFC", resp.GetCo2ETonnes())
	}
	if len(resp.GetComponents()) != 1 || resp.GetComponents()[0].GetAnnexGroup() != "C/I" || resp.GetComponents()[0].GetMassKg() != "1000" {
		t.Errorf("components %v; want HCFC-141b, C/I, 1000 kg", resp.GetComponents())
	}
}

func TestEvaluateMixtureRejects(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()
	shares := func(s ...*halovetv1.MixtureShare) []*halovetv1.MixtureShare { return s }
	cases := []struct {
		name    string
		req     *halovetv1.EvaluateMixtureRequest
		message string // must occur in the status message
	}{
		{"shares summing to 99.5", &halovetv1.EvaluateMixtureRequest{Composition: shares(
			&halovetv1.MixtureShare{Identifier: "R-32", MassPercent: "50"}, &halovetv1.MixtureShare{Identifier: "R-125", MassPercent: "49.5"})}, "99.5"},
		{"share naming an HS code", &halovetv1.EvaluateMixtureRequest{Composition: shares(
			&halovetv1.MixtureShare{Identifier: "2903.45", MassPercent: "100"})}, "2903.45"},
		{"unknown blend", &halovetv1.EvaluateMixtureRequest{Blend: "R-4O4A"}, "R-404A"},
		{"negative mass", &halovetv1.EvaluateMixtureRequest{Blend: "R-410A", NetMassKg: "-1"}, "net_mass_kg"},
		{"nothing to evaluate", &halovetv1.EvaluateMixtureRequest{}, "blend"},
		{"blend and composition", &halovetv1.EvaluateMixtureRequest{Blend: "R-410A", Composition: shares(
			&halovetv1.MixtureShare{Identifier: "R-32", MassPercent: "100"})}, "not both"},
		{"unknown component", &halovetv1.EvaluateMixtureRequest{Composition: shares(
			&halovetv1.MixtureShare{Identifier: "R-32", MassPercent: "50"}, &halovetv1.MixtureShare{Identifier: "R-12S", MassPercent: "50"})}, "composition[1].identifier"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			_, err := client.EvaluateMixture(ctx, tc.req)
			st := catalogueCallStatus(t, err, codes.InvalidArgument)
			if !strings.Contains(st.Message(), tc.message) {
				t.Errorf("message %q; want it to name %q", st.Message(), tc.message)
			}
		})
	}
}
