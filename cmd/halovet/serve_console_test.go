package main

import (
	"io"
	"net/http"
	"net/http/cookiejar"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/pglocal/pgtest"
)

// TestServeMountsTheConsole: `halovet serve` serves the console on the HTTP listener and
// a stored credential's secret signs in; with --open-access there is no console.
func TestServeMountsTheConsole(t *testing.T) {
	url0 := pgtest.NewDatabase(t, "halovet_cmd", migrateForTest)
	tokenFile := filepath.Join(t.TempDir(), "token")
	iss, err := access.IssueSecret()
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(tokenFile, []byte(iss.Secret+"\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	p := startSecuredServe(t, url0, "--bootstrap-credential-file", tokenFile)
	waitServing(t, dialTest(t, p.addr), p)
	jar, _ := cookiejar.New(nil)
	hc := &http.Client{Jar: jar}
	base := "http://" + p.httpAddr
	get := func(path string) (int, string) {
		resp, err := hc.Get(base + path)
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		b, _ := io.ReadAll(resp.Body)
		return resp.StatusCode, string(b)
	}
	code, body := get("/console/sign-in")
	tok := regexp.MustCompile(`name="csrf" value="([^"]+)"`).FindStringSubmatch(body)
	if code != http.StatusOK || tok == nil {
		t.Fatalf("GET /console/sign-in: %d\n%s\n%s", code, body, p.stderr)
	}
	resp, err := hc.PostForm(base+"/console/sign-in", url.Values{"csrf": {tok[1]}, "secret": {iss.Secret}})
	if err != nil {
		t.Fatal(err)
	}
	b, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusOK || !strings.Contains(string(b), "bootstrap-officer") {
		t.Fatalf("sign-in with the bootstrap credential: %d\n%s", resp.StatusCode, b)
	}
	if code, body = get("/console/licences"); code != http.StatusOK || !strings.Contains(body, "Licence register") {
		t.Errorf("GET /console/licences signed in: %d", code)
	}

	// With open access there is no one to sign in as: no console.
	p2 := startServe(t, pgtest.NewDatabase(t, "halovet_cmd", migrateForTest)) // --open-access
	waitServing(t, dialTest(t, p2.addr), p2)
	resp, err = http.Get("http://" + p2.httpAddr + "/console/sign-in")
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	if resp.StatusCode != http.StatusNotFound {
		t.Errorf("console with --open-access: %d, want 404", resp.StatusCode)
	}
}
