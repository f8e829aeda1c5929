package callctx_test

import (
	"os/exec"
	"strings"
	"testing"
)

// TestImportBoundary fails when a domain or workflow package (or callctx itself) depends, directly or
// not, on gRPC, pgx, the generated API, the store or the service package: those stay at the wire and
// the store. ledger holds the workflows, controls the treaty arithmetic and classification.
func TestImportBoundary(t *testing.T) {
	pkgs := []string{"validate", "controls", "substances", "terms", "exact", "callctx", "ledger"}
	// The generated API package imports gRPC; it is named as well so that the message says so.
	forbidden := []string{"google.golang.org/grpc", "github.com/jackc/pgx", "github.com/halovet/halovet/proto/halovet/v1",
		"github.com/halovet/halovet/service", "github.com/halovet/halovet/store"}
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
