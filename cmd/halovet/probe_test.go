package main

import (
	"net"
	"strings"
	"testing"

	"google.golang.org/grpc"
	"google.golang.org/grpc/health"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
)

// TestProbeNotServing: a server that answers NOT_SERVING (here a bare grpc health
// server, as a halovet server answers while its database is behind) makes probe exit 1,
// saying so; SERVING exits 0.
func TestProbeNotServing(t *testing.T) {
	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	gs := grpc.NewServer()
	hs := health.NewServer()
	healthpb.RegisterHealthServer(gs, hs)
	go func() { _ = gs.Serve(lis) }()
	t.Cleanup(gs.Stop)
	addr := lis.Addr().String()

	hs.SetServingStatus("", healthpb.HealthCheckResponse_NOT_SERVING)
	code, stdout, stderr := runCaptured(t, "probe", "--server", addr)
	if code != exitRejected || !strings.Contains(stderr, "NOT_SERVING") {
		t.Errorf("probe of a NOT_SERVING server: exit %d, stdout %q, stderr %q; want 1 naming NOT_SERVING", code, stdout, stderr)
	}
	hs.SetServingStatus("", healthpb.HealthCheckResponse_SERVING)
	if code, stdout, stderr := runCaptured(t, "probe", "--server", addr); code != exitOK || !strings.Contains(stdout, "version not reported") {
		t.Errorf("probe of a SERVING server without a version header: exit %d, stdout %q, stderr %q; want 0", code, stdout, stderr)
	}
}
