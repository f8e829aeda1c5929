package deploy_test

import (
	"slices"
	"strconv"
	"strings"
	"testing"
)

// composeFile is the part of a Compose file these tests look at.
type composeFile struct {
	Services map[string]struct {
		Image       string            `json:"image"`
		Command     []string          `json:"command"`
		Environment map[string]string `json:"environment"`
		Ports       []string          `json:"ports"`
		Healthcheck *struct {
			Test []string `json:"test"`
		} `json:"healthcheck"`
		DependsOn map[string]struct {
			Condition string `json:"condition"`
		} `json:"depends_on"`
		Build *struct {
			Context    string `json:"context"`
			Dockerfile string `json:"dockerfile"`
		} `json:"build"`
	} `json:"services"`
}

func TestComposeMigratesBeforeServing(t *testing.T) {
	var c composeFile
	load(t, "compose.yaml", &c)
	pg, ok := c.Services["postgres"]
	if !ok || !strings.HasPrefix(pg.Image, "postgres:16") {
		t.Fatalf("compose postgres service %+v; want image postgres:16", pg)
	}
	if pg.Healthcheck == nil || !strings.Contains(strings.Join(pg.Healthcheck.Test, " "), "pg_isready") {
		t.Errorf("postgres healthcheck %+v; want a pg_isready check", pg.Healthcheck)
	}
	mig, ok := c.Services["migrate"]
	if !ok || !slices.Equal(mig.Command, []string{"migrate"}) {
		t.Errorf("compose migrate service command %v; want [migrate]", mig.Command)
	}
	if mig.DependsOn["postgres"].Condition != "service_healthy" {
		t.Errorf("migrate depends_on %+v; want postgres: service_healthy", mig.DependsOn)
	}
	srv, ok := c.Services["halovet"]
	if !ok || !slices.Equal(srv.Command, []string{"serve"}) {
		t.Errorf("compose halovet service command %v; want [serve]", srv.Command)
	}
	if srv.DependsOn["migrate"].Condition != "service_completed_successfully" {
		t.Errorf("halovet depends_on %+v; want migrate: service_completed_successfully", srv.DependsOn)
	}
	if !slices.ContainsFunc(srv.Ports, func(p string) bool { return strings.HasSuffix(p, ":"+strconv.Itoa(apiPort)) }) {
		t.Errorf("halovet ports %v; want the container port %d published", srv.Ports, apiPort)
	}
	for _, name := range []string{"migrate", "halovet"} {
		s := c.Services[name]
		if u := s.Environment["HALOVET_DATABASE_URL"]; !strings.HasPrefix(u, "${HALOVET_DATABASE_URL") {
			t.Errorf("%s HALOVET_DATABASE_URL %q; want it from the environment (${HALOVET_DATABASE_URL:-...})", name, u)
		}
		if s.Build == nil || s.Build.Dockerfile != "deploy/Dockerfile" || s.Build.Context != ".." || s.Image != mig.Image {
			t.Errorf("%s build %+v image %q; want deploy/Dockerfile from the repository root, one image for both", name, s.Build, s.Image)
		}
	}
	if l := c.Services["halovet"].Environment["HALOVET_LISTEN"]; !strings.HasSuffix(l, ":"+strconv.Itoa(apiPort)) || !strings.HasPrefix(l, "0.0.0.0:") {
		t.Errorf("halovet HALOVET_LISTEN %q; want 0.0.0.0:%d inside the container", l, apiPort)
	}
}
