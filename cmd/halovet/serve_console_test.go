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
	get := signInConsole(t, p, iss.Secret)
	code, body := get("/console/licences")
	if code != http.StatusOK || !strings.Contains(body, "Licence register") {
		t.Errorf("GET /console/licences signed in: %d", code)
	}

	// With open access there is no one to sign in as: no console.
	p2 := startServe(t, pgtest.NewDatabase(t, "halovet_cmd", migrateForTest)) // --open-access
	waitServing(t, dialTest(t, p2.addr), p2)
	resp, err := http.Get("http://" + p2.httpAddr + "/console/sign-in")
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	if resp.StatusCode != http.StatusNotFound {
		t.Errorf("console with --open-access: %d, want 404", resp.StatusCode)
	}
}

// signInConsole signs in to the console of p with secret and returns a GET of a console
// path in that session: its status and body.
func signInConsole(t *testing.T, p *serverProcess, secret string) func(path string) (int, string) {
	t.Helper()
	jar, _ := cookiejar.New(nil)
	hc := &http.Client{Jar: jar}
	base := "http://" + p.httpAddr
	get := func(path string) (int, string) {
		t.Helper()
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
	resp, err := hc.PostForm(base+"/console/sign-in", url.Values{"csrf": {tok[1]}, "secret": {secret}})
	if err != nil {
		t.Fatal(err)
	}
	b, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusOK || !strings.Contains(string(b), "bootstrap-officer") {
		t.Fatalf("sign-in with the bootstrap credential: %d\n%s", resp.StatusCode, b)
	}
	return get
}

// TestConsoleReportJSONIsTheCLIs: the console's report.json download, the report.json of
// 'year-report --dir' and 'year-report --output json' are the same bytes for the same
// register, in the project's JSON dialect. The register is the demo's (invented): its
// registry and national entries.
func TestConsoleReportJSONIsTheCLIs(t *testing.T) {
	dir := t.TempDir()
	tokenFile := filepath.Join(dir, "token")
	iss, err := access.IssueSecret()
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(tokenFile, []byte(iss.Secret+"\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	p := startSecuredServe(t, pgtest.NewDatabase(t, "halovet_cmd", migrateForTest), "--bootstrap-credential-file", tokenFile)
	waitServing(t, dialTest(t, p.addr), p)
	cli := func(args ...string) string {
		t.Helper()
		code, out, errOut := runCaptured(t, append(args, "--server", p.addr, "--credential-file", tokenFile)...)
		if code != exitOK {
			t.Fatalf("halovet %s: exit %d\n%s\n%s", strings.Join(args, " "), code, out, errOut)
		}
		return out
	}
	cli("load", demoScenario)
	cli("entries", demoDir+"/national_entries.csv")
	reportDir := filepath.Join(dir, "report")
	cli("year-report", "--year", "2025", "--dir", reportDir)
	fromDir, err := os.ReadFile(filepath.Join(reportDir, "report.json"))
	if err != nil {
		t.Fatal(err)
	}
	fromStdout := cli("year-report", "--year", "2025", "--output", "json")

	get := signInConsole(t, p, iss.Secret)
	code, download := get("/console/year/report.json?year=2025")
	if code != http.StatusOK {
		t.Fatalf("GET /console/year/report.json: %d\n%s", code, download)
	}
	if download != string(fromDir) {
		t.Errorf("the console's report.json differs from year-report --dir's:\nconsole:\n%s\ncommand line:\n%s", download, fromDir)
	}
	if download != fromStdout {
		t.Errorf("the console's report.json differs from year-report --output json:\nconsole:\n%s\ncommand line:\n%s", download, fromStdout)
	}
	// The dialect, not protobuf JSON: the state as a word, snake_case keys. C/I has data
	// in 2025 (the demo's national entries hold HCFC imports of that year).
	for _, want := range []string{`"state": "provisional"`, `"country_code": "XA"`, `"annex_group": "C/I"`, `"has_data": true`} {
		if !strings.Contains(download, want) {
			t.Errorf("the console's report.json lacks %s:\n%.600s", want, download)
		}
	}
}
