package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/store"
)

// runBin runs the built binary and returns its exit code, standard output and error.
func runBin(t *testing.T, env []string, args ...string) (int, string, string) {
	t.Helper()
	cmd := exec.Command(halovetBinary(t), args...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	cmd.Env = append(append(os.Environ(), "HALOVET_CREDENTIAL_FILE=", "HALOVET_SERVER="), env...)
	err := cmd.Run()
	code := 0
	if ee, ok := err.(*exec.ExitError); ok {
		code = ee.ExitCode()
	} else if err != nil {
		t.Fatal(err)
	}
	return code, stdout.String(), stderr.String()
}

// TestCredentialsAndAuditCommandLine drives the binary as an operator would: the first
// officer's credential straight in the database, a server with authentication, a second
// credential issued, listed and revoked through it, the audit trail listed and verified;
// calls without a credential, with a revoked one, and with one in plaintext to a
// non-loopback host are refused.
func TestCredentialsAndAuditCommandLine(t *testing.T) {
	url := pgtest.NewDatabase(t, "halovet_cmd", migrateForTest)
	dir := t.TempDir()
	officer := filepath.Join(dir, "officer.cred")
	code, out, errOut := runBin(t, nil, "credentials", "issue", "--database-url", url, "--role", "officer", "--name", "officer.cli (invented)", "--secret-file", officer)
	if code != 0 || out != "" || !strings.Contains(errOut, "issued credential") {
		t.Fatalf("bootstrap issue: exit %d\nstdout %q\nstderr %s", code, out, errOut)
	}
	if b, err := os.ReadFile(officer); err != nil || !strings.HasPrefix(string(b), access.SecretPrefix) {
		t.Fatalf("secret file: %q %v", b, err)
	}
	if fi, _ := os.Stat(officer); fi.Mode().Perm() != 0o600 {
		t.Errorf("secret file mode %v; want 0600", fi.Mode().Perm())
	}
	p := startSecuredServe(t, url)
	waitServing(t, dialTest(t, p.addr), p)
	s := []string{"--server", p.addr}
	as := func(file string) []string { return append([]string{"--credential-file", file}, s...) }

	// Without a credential: refused, exit 4, saying how to give one.
	code, _, errOut = runBin(t, nil, append([]string{"licences"}, s...)...)
	if code != exitFailure || !strings.Contains(errOut, "needs a credential") || !strings.Contains(errOut, "--credential-file") {
		t.Fatalf("licences without a credential: exit %d\n%s", code, errOut)
	}
	code, out, errOut = runBin(t, nil, append([]string{"licences"}, as(officer)...)...)
	if code != 0 {
		t.Fatalf("licences as the officer: exit %d\n%s%s", code, out, errOut)
	}

	// A reader's credential through the API; its secret on stdout alone.
	code, out, errOut = runBin(t, nil, append([]string{"credentials", "issue", "--role", "reader", "--name", "reader.cli"}, as(officer)...)...)
	if code != 0 || !strings.HasPrefix(out, access.SecretPrefix) || strings.Count(out, "\n") != 1 {
		t.Fatalf("issue a reader: exit %d\nstdout %q\n%s", code, out, errOut)
	}
	reader := filepath.Join(dir, "reader.cred")
	writeFile(t, reader, out)
	readerID, _ := access.ParseSecret(strings.TrimSpace(out))
	code, out, _ = runBin(t, nil, append([]string{"lookup", "R-22"}, as(reader)...)...)
	if code != 0 || !strings.Contains(out, "HCFC-22") {
		t.Fatalf("lookup as the reader: exit %d\n%s", code, out)
	}
	code, _, errOut = runBin(t, nil, append([]string{"credentials", "issue", "--role", "reader", "--name", "x"}, as(reader)...)...)
	if code != exitFailure || !strings.Contains(errOut, "PermissionDenied") {
		t.Fatalf("a reader issuing a credential: exit %d\n%s", code, errOut)
	}
	code, out, _ = runBin(t, nil, append([]string{"credentials", "list"}, as(officer)...)...)
	if code != 0 || !strings.Contains(out, "officer.cli (invented)") || !strings.Contains(out, "reader.cli") || strings.Contains(out, access.SecretPrefix) {
		t.Fatalf("credentials list: exit %d\n%s", code, out)
	}
	code, out, errOut = runBin(t, nil, append([]string{"credentials", "revoke", readerID, "--reason", "test over"}, as(officer)...)...)
	if code != 0 || !strings.Contains(out, "revoked") {
		t.Fatalf("revoke: exit %d\n%s%s", code, out, errOut)
	}
	code, _, errOut = runBin(t, nil, append([]string{"lookup", "R-22"}, as(reader)...)...)
	if code != exitFailure || !strings.Contains(errOut, "revoked") {
		t.Fatalf("lookup with the revoked credential: exit %d\n%s", code, errOut)
	}

	// The trail names the officer, from the bootstrap ("local") on.
	code, out, _ = runBin(t, nil, append([]string{"audit", "list", "--object-type", "credential"}, as(officer)...)...)
	if code != 0 || !strings.Contains(out, "local") || !strings.Contains(out, "officer.cli (invented)") || !strings.Contains(out, "revoke") || !strings.Contains(out, "3 events") {
		t.Fatalf("audit list: exit %d\n%s", code, out)
	}
	code, out, _ = runBin(t, nil, append([]string{"audit", "verify"}, as(officer)...)...)
	if code != 0 || !strings.Contains(out, "intact") {
		t.Fatalf("audit verify: exit %d\n%s", code, out)
	}
	// Behind the server's back, as a superuser with the append-only trigger disabled.
	st, err := store.Open(t.Context(), url)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	for _, sql := range []string{`ALTER TABLE audit_log DISABLE TRIGGER audit_log_no_update`,
		`UPDATE audit_log SET actor = 'someone else' WHERE chain_seq = 2`,
		`ALTER TABLE audit_log ENABLE TRIGGER audit_log_no_update`} {
		if _, err := st.Pool().Exec(t.Context(), sql); err != nil {
			t.Fatal(err)
		}
	}
	code, out, errOut = runBin(t, nil, append([]string{"audit", "verify"}, as(officer)...)...)
	if code != exitRejected || !strings.Contains(out, "event 2: ") || !strings.Contains(out, "altered") {
		t.Fatalf("audit verify after altering event 2: exit %d\n%s%s", code, out, errOut)
	}

	// Plaintext to a non-loopback host: refused before any connection (192.0.2.1 is
	// TEST-NET-1, RFC 5737: nothing answers there).
	code, _, errOut = runBin(t, nil, "licences", "--credential-file", officer, "--server", "192.0.2.1:7390")
	if code != exitUsage || !strings.Contains(errOut, "plaintext") {
		t.Fatalf("credential in plaintext to 192.0.2.1: exit %d\n%s", code, errOut)
	}
	code, _, errOut = runBin(t, []string{"HALOVET_CREDENTIAL=" + strings.TrimSpace(readFile(t, officer))}, "licences", "--server", "example.invalid:7390")
	if code != exitUsage || !strings.Contains(errOut, "HALOVET_CREDENTIAL") {
		t.Fatalf("HALOVET_CREDENTIAL in plaintext to example.invalid: exit %d\n%s", code, errOut)
	}
	empty := filepath.Join(dir, "empty.cred")
	writeFile(t, empty, "\n")
	code, _, errOut = runBin(t, nil, append([]string{"licences"}, as(empty)...)...)
	if code != exitUsage || !strings.Contains(errOut, "is empty") {
		t.Fatalf("empty credential file: exit %d\n%s", code, errOut)
	}
}

func readFile(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// TestServeAccessDefaults: --open-access on a non-loopback address is refused with a
// clear message (and served with --open-access-on-network); an empty or malformed
// bootstrap credential file stops the server; a good one lets its holder in.
func TestServeAccessDefaults(t *testing.T) {
	url := pgtest.NewDatabase(t, "halovet_cmd", migrateForTest)
	dir := t.TempDir()
	port := freeAddr(t)[strings.LastIndex(freeAddr(t), ":")+1:]
	cases := []struct {
		name string
		args []string
		want string
	}{
		{"open access on every interface", []string{"--listen", "0.0.0.0:" + port, "--open-access"}, "not a loopback address"},
		{"open access on the HTTP port", []string{"--listen", freeAddr(t), "--http-listen", ":" + port, "--open-access"}, "--http-listen"},
		{"empty bootstrap file", []string{"--listen", freeAddr(t), "--bootstrap-credential-file", filepath.Join(dir, "empty")}, "is empty"},
		{"missing bootstrap file", []string{"--listen", freeAddr(t), "--bootstrap-credential-file", filepath.Join(dir, "absent")}, "no such file"},
		{"malformed bootstrap file", []string{"--listen", freeAddr(t), "--bootstrap-credential-file", filepath.Join(dir, "bad")}, "malformed"},
	}
	writeFile(t, filepath.Join(dir, "empty"), "\n")
	writeFile(t, filepath.Join(dir, "bad"), "CHANGE-ME-to-a-long-random-string\n")
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			args := append([]string{"serve", "--database-url", url, "--http-listen", ""}, tc.args...)
			code, _, errOut := runBin(t, nil, args...)
			if code != exitUsage || !strings.Contains(errOut, tc.want) {
				t.Fatalf("exit %d; want %d with %q:\n%s", code, exitUsage, tc.want, errOut)
			}
		})
	}

	// The opt-out: served, and warned about.
	p := startServeWith(t, url, "--listen", "0.0.0.0:"+port, "--open-access", "--open-access-on-network")
	_ = p
	// startServeWith gave its own --listen first; the later one wins (pflag).
	waitServing(t, dialTest(t, "127.0.0.1:"+port), p)
	if !strings.Contains(p.stderr.String(), "open access") {
		t.Errorf("no open-access warning in the log:\n%s", p.stderr)
	}

	// A bootstrap credential.
	secret := filepath.Join(dir, "bootstrap.cred")
	if code, _, errOut := runBin(t, nil, "credentials", "new-secret", "--secret-file", secret); code != 0 {
		t.Fatalf("new-secret: exit %d\n%s", code, errOut)
	}
	b := startSecuredServe(t, url, "--bootstrap-credential-file", secret)
	waitServing(t, dialTest(t, b.addr), b)
	code, out, errOut := runBin(t, nil, "audit", "list", "--object-type", "credential", "--credential-file", secret, "--server", b.addr)
	if code != 0 || !strings.Contains(out, "bootstrap credential file") {
		t.Fatalf("audit list as the bootstrap officer: exit %d\n%s%s", code, out, errOut)
	}
}
