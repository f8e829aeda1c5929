package service_test

import (
	"context"
	"slices"
	"strings"
	"testing"

	"google.golang.org/grpc/codes"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// AnalyseReading over gRPC against a real server on PostgreSQL: the catalogue snapshot is
// the seed read back from the database.
func TestAnalyseReading(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewAnalysisServiceClient(conn)
	ctx := context.Background()

	t.Run("CFC-12 declared as HFC-134a", func(t *testing.T) {
		resp, err := client.AnalyseReading(ctx, &halovetv1.AnalyseReadingRequest{
			Components:            []*halovetv1.MeasuredShare{{Identifier: "R-12", MassPercent: "99"}},
			NonCondensablePercent: "1", Declared: "HFC-134a", NetMassKg: "250"})
		if err != nil {
			t.Fatal(err)
		}
		if resp.GetDeclaredFits() || resp.GetState() != halovetv1.ReadingState_READING_STATE_STANDARD || resp.GetMatches()[0].GetDesignation() != "CFC-12" {
			t.Errorf("declared fits %v, state %v, first %s; want CFC-12 recognised and HFC-134a refuted",
				resp.GetDeclaredFits(), resp.GetState(), resp.GetMatches()[0].GetDesignation())
		}
		// CFC-12: Annex A Group I, ODP 1.0 (Montreal Protocol Annex A); 250 kg → 0.25 ODP t.
		h := resp.GetHidden()
		if len(h) != 1 || h[0].GetDesignation() != "CFC-12" || h[0].GetAnnexGroup() != "A/I" || h[0].GetOdpTonnes() != "0.25" {
			t.Errorf("hidden %v; want CFC-12 A/I 0.25 ODP t", h)
		}
		if resp.GetDeclared().GetDesignation() != "HFC-134a" || !slices.Contains(resp.GetDeclared().GetExtra(), "CFC-12") {
			t.Errorf("declared match %v", resp.GetDeclared())
		}
		if c := resp.GetCautions(); len(c) == 0 || !strings.Contains(c[len(c)-1], "decision support") {
			t.Errorf("cautions %v do not end with the decision-support notice", c)
		}
	})

	t.Run("R-410A and R-410B both listed", func(t *testing.T) {
		// R-410A 50/50 (+0.5/-1.5, +1.5/-0.5), R-410B 45/55 (±1), HFC-32/HFC-125 (ASHRAE 34-2019).
		resp, err := client.AnalyseReading(ctx, &halovetv1.AnalyseReadingRequest{
			Components:        []*halovetv1.MeasuredShare{{Identifier: "HFC-32", MassPercent: "47.5"}, {Identifier: "HFC-125", MassPercent: "52.5"}},
			UncertaintyPoints: "1.5"})
		if err != nil {
			t.Fatal(err)
		}
		var fits []string
		for _, m := range resp.GetMatches()[:resp.GetFittingCount()] {
			fits = append(fits, m.GetDesignation())
		}
		if !slices.Contains(fits, "R-410A") || !slices.Contains(fits, "R-410B") {
			t.Errorf("fits %v; want R-410A and R-410B", fits)
		}
		if resp.GetDeclared() != nil {
			t.Errorf("declared %v without a declaration", resp.GetDeclared())
		}
	})

	t.Run("bad readings name the field", func(t *testing.T) {
		for _, tc := range []struct {
			req   *halovetv1.AnalyseReadingRequest
			field string
		}{
			{&halovetv1.AnalyseReadingRequest{Components: []*halovetv1.MeasuredShare{{Identifier: "R-22", MassPercent: "60"}}}, "components"},
			{&halovetv1.AnalyseReadingRequest{Components: []*halovetv1.MeasuredShare{{Identifier: "R-22", MassPercent: "101"}, {Identifier: "R-32", MassPercent: "-1"}}}, "components[0].mass_percent"},
			{&halovetv1.AnalyseReadingRequest{Components: []*halovetv1.MeasuredShare{{Identifier: "R-22", MassPercent: "50"}, {Identifier: "fizzgas", MassPercent: "50"}}}, "components[1].identifier"},
			{&halovetv1.AnalyseReadingRequest{Components: []*halovetv1.MeasuredShare{{Identifier: "air", MassPercent: "100"}}}, "components"},
			{&halovetv1.AnalyseReadingRequest{Components: []*halovetv1.MeasuredShare{{Identifier: "R-22", MassPercent: "100"}}, Declared: "R-999Q"}, "declared"},
		} {
			_, err := client.AnalyseReading(ctx, tc.req)
			st := catalogueCallStatus(t, err, codes.InvalidArgument)
			if f := catalogueViolatedFields(st); len(f) != 1 || f[0] != tc.field {
				t.Errorf("%v: fields %v, want %s (%s)", tc.req, f, tc.field, st.Message())
			}
		}
	})

	t.Run("health", func(t *testing.T) {
		resp, err := healthpb.NewHealthClient(conn).Check(ctx, &healthpb.HealthCheckRequest{Service: halovetv1.AnalysisService_ServiceDesc.ServiceName})
		if err != nil {
			t.Fatal(err)
		}
		if resp.GetStatus() == healthpb.HealthCheckResponse_SERVICE_UNKNOWN {
			t.Errorf("health of %s is unknown", halovetv1.AnalysisService_ServiceDesc.ServiceName)
		}
	})
}
