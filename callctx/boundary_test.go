package callctx_test

import (
	"os/exec"
	"strings"
	"testing"
)

// TestImportBoundary fails when a domain or workflow package (or callctx itself) depends, directly or
// not, on gRPC, pgx or the service package: those stay at the wire and the store.
func TestImportBoundary(t *testing.T) {
	pkgs := []string{"validate", "controls", "substances", "callctx", "ledger"}
	// The generated API package imports gRPC; it is named too, so that the failure says so.
	forbidden := []string{"google.golang.org/grpc", "github.com/jackc/pgx", "github.com/halovet/halovet/service", "github.com/halovet/halovet/store", "github.com/halovet/halovet/proto"}
	for _, p := range pkgs {
		out, err := exec.Command("go", "list", "-deps", "github.com/halovet/halovet/"+p).Output()
		if err != nil {
			t.Fatalf("go list -deps %s: %v", p, err)
		}
		deps := strings.Fields(string(out))
		if len(deps) == 0 || deps[len(deps)-1] != "github.com/halovet/halovet/"+p {
			t.Fatalf("go list -deps %s did not end with the package itself: %q", p, deps)
		}
		for _, dep := range deps {
			for _, f := range forbidden {
				if dep == f || strings.HasPrefix(dep, f+"/") {
					t.Errorf("%s depends on %s (forbidden prefix %s)", p, dep, f)
				}
			}
		}
	}
}
