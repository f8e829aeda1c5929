package deploy_test

import (
	"bytes"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// dockerfile is a Dockerfile split into build stages of instruction lines.
type dockerfile struct {
	stages [][]string // each stage starts with its FROM line
}

// parseDockerfile joins continuation lines and drops comments.
func parseDockerfile(t *testing.T, path string) dockerfile {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var df dockerfile
	var cur strings.Builder
	for _, line := range strings.Split(string(data), "\n") {
		trimmed := strings.TrimSpace(line)
		if cur.Len() == 0 && (trimmed == "" || strings.HasPrefix(trimmed, "#")) {
			continue
		}
		if strings.HasSuffix(trimmed, "\\") {
			cur.WriteString(strings.TrimSuffix(trimmed, "\\") + " ")
			continue
		}
		cur.WriteString(trimmed)
		instr := cur.String()
		cur.Reset()
		if strings.HasPrefix(strings.ToUpper(instr), "FROM ") {
			df.stages = append(df.stages, nil)
		}
		if len(df.stages) == 0 {
			t.Fatalf("%s: %q before the first FROM", path, instr)
		}
		df.stages[len(df.stages)-1] = append(df.stages[len(df.stages)-1], instr)
	}
	return df
}

// find returns the instructions of a stage with the given keyword.
func find(stage []string, keyword string) []string {
	var out []string
	for _, in := range stage {
		if strings.HasPrefix(strings.ToUpper(in), keyword+" ") {
			out = append(out, strings.TrimSpace(in[len(keyword):]))
		}
	}
	return out
}

func TestDockerfileBuildsStaticBinaryAndRunsAsNonRoot(t *testing.T) {
	df := parseDockerfile(t, "Dockerfile")
	if len(df.stages) < 2 {
		t.Fatalf("Dockerfile has %d stages; want a build stage and a runtime stage", len(df.stages))
	}
	build, final := df.stages[0], df.stages[len(df.stages)-1]

	// The build image's Go must be the release go.mod asks for.
	gomod, err := os.ReadFile("../go.mod")
	if err != nil {
		t.Fatal(err)
	}
	goLine := regexp.MustCompile(`(?m)^go (\d+\.\d+)`).FindSubmatch(gomod)
	if goLine == nil {
		t.Fatal("no go directive in ../go.mod")
	}
	from := find(build, "FROM")[0]
	if !strings.HasPrefix(from, "golang:"+string(goLine[1])) {
		t.Errorf("build stage FROM %q; want golang:%s (go.mod's go version)", from, goLine[1])
	}
	buildRun := strings.Join(find(build, "RUN"), "\n")
	if !strings.Contains(buildRun, "CGO_ENABLED=0") || !regexp.MustCompile(`go build .*\./cmd/halovet\b`).MatchString(buildRun) {
		t.Errorf("build stage RUN %q; want CGO_ENABLED=0 go build of ./cmd/halovet", buildRun)
	}
	if _, err := os.Stat("../cmd/halovet/main.go"); err != nil {
		t.Errorf("the Dockerfile builds ./cmd/halovet, which does not exist: %v", err)
	}

	users := find(final, "USER")
	if len(users) == 0 {
		t.Fatal("runtime stage has no USER; the container would run as root")
	}
	user, _, _ := strings.Cut(users[len(users)-1], ":")
	if user == "root" || user == "0" {
		t.Errorf("runtime USER %q is root", users[len(users)-1])
	}
	if _, err := strconv.Atoi(user); err != nil {
		t.Errorf("runtime USER %q is not numeric; Kubernetes runAsNonRoot cannot verify a user name", user)
	}
	if got := strings.Fields(strings.Join(find(final, "EXPOSE"), " ")); !slices.Contains(got, strconv.Itoa(apiPort)) || !slices.Contains(got, strconv.Itoa(httpPort)) {
		t.Errorf("EXPOSE %v; want %d and %d", got, apiPort, httpPort)
	}
	if got := find(final, "ENTRYPOINT"); !slices.Equal(got, []string{`["/usr/local/bin/halovet"]`}) {
		t.Errorf("ENTRYPOINT %v; want [\"/usr/local/bin/halovet\"]", got)
	}
	if got := find(final, "CMD"); !slices.Equal(got, []string{`["serve"]`}) {
		t.Errorf("CMD %v; want [\"serve\"]", got)
	}
	copied := strings.Join(find(final, "COPY"), "\n")
	if !strings.Contains(copied, "--from=") || !strings.Contains(copied, "/usr/local/bin/halovet") {
		t.Errorf("runtime stage COPY %q; want the binary copied from the build stage to /usr/local/bin/halovet", copied)
	}

	// A base image pinned by digest (scripts/pin-base-images.sh) keeps its tag for the
	// reader and carries a whole sha256 digest.
	for _, st := range df.stages {
		ref := strings.Fields(find(st, "FROM")[0])[0]
		if _, digest, pinned := strings.Cut(ref, "@"); pinned && !regexp.MustCompile(`^sha256:[0-9a-f]{64}$`).MatchString(digest) {
			t.Errorf("FROM %s: %q is not a sha256 digest", ref, digest)
		}
	}
	labels := strings.Join(find(final, "LABEL"), " ")
	for _, l := range []string{"org.opencontainers.image.version=\"${VERSION}\"", "org.opencontainers.image.revision=\"${REVISION}\"", "org.opencontainers.image.title="} {
		if !strings.Contains(labels, l) {
			t.Errorf("runtime LABEL %q lacks %s", labels, l)
		}
	}
	if !strings.Contains(buildRun, "main.version=${VERSION}") || !strings.Contains(buildRun, "main.commit=${REVISION}") {
		t.Errorf("build RUN %q does not stamp VERSION and REVISION into the binary", buildRun)
	}
	if hc := strings.Join(find(final, "HEALTHCHECK"), " "); !strings.Contains(hc, `"/usr/local/bin/halovet", "probe"`) {
		t.Errorf("HEALTHCHECK %q; want the binary's probe verb (the image has no shell)", hc)
	}

	// The image and the Kubernetes manifests must agree on the user.
	m := loadManifests(t)
	if u := m.deployment.Spec.Template.Spec.SecurityContext.RunAsUser; u == nil || strconv.FormatInt(*u, 10) != user {
		t.Errorf("deployment runAsUser %s; want the image's USER %s", show(u), user)
	}
}

func TestDockerignoreKeepsBuildInputs(t *testing.T) {
	data, err := os.ReadFile("Dockerfile.dockerignore")
	if err != nil {
		t.Fatal(err)
	}
	for _, line := range bytes.Split(data, []byte("\n")) {
		p := strings.TrimSpace(string(line))
		if p == "" || strings.HasPrefix(p, "#") {
			continue
		}
		for _, needed := range []string{"go.mod", "go.sum", "cmd", "cmd/halovet"} {
			if ok, _ := filepath.Match(p, needed); ok || p == "*" {
				t.Errorf("Dockerfile.dockerignore pattern %q excludes %s, which the build needs", p, needed)
			}
		}
	}
}
