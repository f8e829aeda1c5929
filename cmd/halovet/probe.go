package main

import (
	"context"
	"fmt"
	"strings"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
	"google.golang.org/grpc/metadata"

	"github.com/halovet/halovet/service"
)

func init() {
	addVerb("probe", "ask a server's health, for container health checks", probeUsage, defineProbe)
}

const probeUsage = `probe [flags]

Asks the server at --server for its health (the standard grpc.health.v1 check) and
prints the answer with the server's version and commit. Meant for container health
checks in an image without a shell (the image's HEALTHCHECK runs 'halovet probe'); in
Kubernetes the kubelet's own gRPC probes ask the same service.

Without --live it asks for readiness: SERVING while the database answers and its schema
is not behind the server's (see 'halovet serve --help'). With --live it asks only whether
the process is up (the "liveness" service, SERVING until shutdown), which does not
depend on the database; use it for a liveness check, so that a database outage does not
get the server restarted.

Exit code: 0 when SERVING; 1 when the server answers anything else (NOT_SERVING, or
shutting down); 2 for unusable command-line input; 3 when no server answers within
--timeout.

Examples:
  halovet probe
  halovet probe --live --timeout 2s
  halovet probe --server halovet.example.internal --tls`

func defineProbe(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	live := fs.Bool("live", false, "ask only whether the process is up (the liveness service), not whether it can serve")
	fs.Lookup("timeout").DefValue = "5s"
	_ = fs.Set("timeout", envOr("HALOVET_PROBE_TIMEOUT", "5s"))
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		if cf.timeout > 0 {
			var cancel context.CancelFunc
			ctx, cancel = context.WithTimeout(ctx, cf.timeout)
			defer cancel()
		}
		name := ""
		if *live {
			name = service.LivenessService
		}
		var hdr metadata.MD
		resp, err := healthpb.NewHealthClient(conn).Check(ctx, &healthpb.HealthCheckRequest{Service: name}, grpc.Header(&hdr))
		if err != nil {
			return err
		}
		build := "halovet (version not reported)"
		if v := hdr.Get(service.VersionHeader); len(v) > 0 {
			ver, rev, _ := strings.Cut(v[0], " ")
			build = fmt.Sprintf("halovet %s (commit %s)", ver, rev)
		}
		what := "ready"
		if *live {
			what = "live"
		}
		st := resp.GetStatus()
		if st != healthpb.HealthCheckResponse_SERVING {
			return rejectedErr("%s at %s: %s, not %s", build, cf.server, st, what)
		}
		fmt.Printf("%s %s at %s: %s\n", what, cf.server, build, st)
		return nil
	}
}
