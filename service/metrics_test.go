package service_test

import (
	"context"
	"io"
	"net/http/httptest"
	"strings"
	"testing"

	"google.golang.org/grpc"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
	"google.golang.org/grpc/metadata"

	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// TestMetricsCountCallsVerdictsAndFindings checks two records and records one, then scrapes
// the metrics: the per-RPC counts and codes, the verdicts by outcome and by whether they
// were stored (the batch calls' too), the findings by code, the build (also in the
// version header of a health check), the pool and the quota lines by share used.
func TestMetricsCountCallsVerdictsAndFindings(t *testing.T) {
	t.Parallel()
	srv, conn, _, _ := runTestServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB),
		service.Options{Version: "v1.2.3-test", Revision: "abc123"})
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	ctx := context.Background()
	rejected := shipRecord("MET-2")
	rejected.PartnerCountry = ""
	for _, rec := range []*halovetv1.ShipmentRecord{shipRecord("MET-1"), rejected} {
		if _, err := client.CheckShipment(ctx, &halovetv1.CheckShipmentRequest{Record: rec}); err != nil {
			t.Fatal(err)
		}
	}
	shipRecordCall(t, client, shipRecord("MET-3"))
	// The batch calls count too: one accepted, one rejected for want of a partner.
	if _, err := client.CheckShipmentBatch(ctx, &halovetv1.CheckShipmentBatchRequest{Records: []*halovetv1.ShipmentRecord{shipRecord("MET-4"), rejected}}); err != nil {
		t.Fatal(err)
	}
	if _, err := client.CheckShipment(ctx, &halovetv1.CheckShipmentRequest{}); err == nil {
		t.Fatal("an empty check succeeded")
	}

	rec := httptest.NewRecorder()
	srv.MetricsHandler().ServeHTTP(rec, httptest.NewRequest("GET", "/metrics", nil))
	body, _ := io.ReadAll(rec.Body)
	text := string(body)
	for _, want := range []string{
		`halovet_shipment_records_total{outcome="accepted",recorded="false"} 2`,
		`halovet_shipment_records_total{outcome="rejected",recorded="false"} 2`,
		`halovet_shipment_records_total{outcome="accepted",recorded="true"} 1`,
		`halovet_shipment_findings_total{code="PARTNER_MISSING",severity="error"} 2`,
		`grpc_server_handled_total{grpc_code="OK",grpc_method="CheckShipment",grpc_service="halovet.v1.ShipmentService",grpc_type="unary"} 2`,
		`grpc_server_handled_total{grpc_code="InvalidArgument",grpc_method="CheckShipment",grpc_service="halovet.v1.ShipmentService",grpc_type="unary"} 1`,
		`grpc_server_handled_total{grpc_code="OK",grpc_method="RecordShipments",grpc_service="halovet.v1.ShipmentService",grpc_type="bidi_stream"} 1`,
		`grpc_server_handling_seconds_bucket{grpc_method="CheckShipment"`,
		`halovet_db_pool_connections{state="max"}`,
		`halovet_build_info{revision="abc123",version="v1.2.3-test"} 1`,
		`halovet_quota_lines{share_used="under-50"}`,
	} {
		if !strings.Contains(text, want) {
			t.Errorf("scrape lacks %s", want)
		}
	}
	var hdr metadata.MD
	if _, err := healthpb.NewHealthClient(conn).Check(ctx, &healthpb.HealthCheckRequest{}, grpc.Header(&hdr)); err != nil {
		t.Fatal(err)
	}
	if got := hdr.Get(service.VersionHeader); len(got) != 1 || got[0] != "v1.2.3-test abc123" {
		t.Errorf("health check header %s = %q; want the build, \"v1.2.3-test abc123\"", service.VersionHeader, got)
	}
	if t.Failed() {
		t.Logf("scrape:\n%s", grepLines(text, "halovet_", "grpc_server_handled_total"))
	}
}

func grepLines(text string, prefixes ...string) string {
	var out []string
	for _, l := range strings.Split(text, "\n") {
		for _, p := range prefixes {
			if strings.HasPrefix(l, p) {
				out = append(out, l)
			}
		}
	}
	return strings.Join(out, "\n")
}
