package deploy_test

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// kubeconform runs the kubeconform pinned in tools/go.mod over paths with the schemas kept
// in schemas/ (as `make kubeconform` does) and returns its output and whether it passed.
func kubeconform(t *testing.T, paths ...string) (string, bool) {
	t.Helper()
	gobin, err := exec.LookPath("go")
	if err != nil {
		t.Fatalf("the go command is needed to run kubeconform: %v", err)
	}
	args := append([]string{"tool", "-modfile=../tools/go.mod", "kubeconform", "-strict", "-summary", "-skip", "Kustomization",
		"-ignore-filename-pattern", `patch\.example\.yaml$`, // strategic-merge patches, not whole resources
		"-schema-location", "schemas/k8s-v1.34/{{ .ResourceKind }}{{ .KindSuffix }}.json"}, paths...)
	out, err := exec.Command(gobin, args...).CombinedOutput()
	if _, ok := err.(*exec.ExitError); err != nil && !ok {
		t.Fatalf("running kubeconform: %v\n%s", err, out)
	}
	return string(out), err == nil
}

// TestKubeconformValidatesTheManifests: every manifest of k8s/ passes kubeconform against
// the kept schemas, and a schema exists for each kind used (a kind without one is an
// error, not a skip); a Deployment with a misspelt field, or a port given as a list,
// fails, so the schemas are strict and really read.
func TestKubeconformValidatesTheManifests(t *testing.T) {
	out, ok := kubeconform(t, "k8s")
	if !ok || !strings.Contains(out, "Invalid: 0, Errors: 0") {
		t.Fatalf("kubeconform k8s/ failed:\n%s", out)
	}
	dep, err := os.ReadFile("k8s/deployment.yaml")
	if err != nil {
		t.Fatal(err)
	}
	for name, change := range map[string][2]string{
		"misspelt field": {"  revisionHistoryLimit: 5", "  revisionHistoryLimits: 5"},
		"wrong type":     {"            - name: grpc\n              containerPort: 7390", "            - name: grpc\n              containerPort: [7390]"},
	} {
		if !strings.Contains(string(dep), change[0]) {
			t.Fatalf("%s: deployment.yaml no longer contains %q; update the test", name, change[0])
		}
		bad := filepath.Join(t.TempDir(), "deployment.yaml")
		if err := os.WriteFile(bad, []byte(strings.Replace(string(dep), change[0], change[1], 1)), 0o600); err != nil {
			t.Fatal(err)
		}
		if out, ok := kubeconform(t, bad); ok || !strings.Contains(out, "Invalid: 1") {
			t.Errorf("%s: kubeconform passed a broken Deployment:\n%s", name, out)
		}
	}
}
