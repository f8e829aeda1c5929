package pglocal

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
)

// programs runs the server programs of one installation on one data dir as one account.
type programs struct {
	binDir  string
	dataDir string
	acct    account
}

// command builds a command for the named server program. It runs in the data dir (the
// unprivileged account may not enter the caller's working directory), without the caller's
// PG* environment (which would redirect pg_ctl), in the C locale, and as the account.
func (p programs) command(ctx context.Context, program string, args ...string) *exec.Cmd {
	cmd := exec.CommandContext(ctx, filepath.Join(p.binDir, program), args...)
	p.prepare(cmd)
	return cmd
}

// prepare sets the working dir, environment and credentials of cmd.
func (p programs) prepare(cmd *exec.Cmd) {
	cmd.Dir = p.dataDir
	cmd.Env = childEnv(os.Environ())
	if p.acct.cred != nil {
		cmd.SysProcAttr = &syscall.SysProcAttr{Credential: p.acct.cred}
	}
}

// run runs a server program and returns its combined output in the error when it fails.
func (p programs) run(ctx context.Context, program string, args ...string) ([]byte, error) {
	out, err := p.command(ctx, program, args...).CombinedOutput()
	if err != nil {
		return out, fmt.Errorf("pglocal: %s %s: %w: %s", program, strings.Join(args, " "), err, strings.TrimSpace(string(out)))
	}
	return out, nil
}

// childEnv drops PG* variables and the locale settings from env and sets LC_ALL=C.
func childEnv(env []string) []string {
	out := make([]string, 0, len(env)+1)
	for _, kv := range env {
		name, _, _ := strings.Cut(kv, "=")
		if strings.HasPrefix(name, "PG") || name == "LANG" || strings.HasPrefix(name, "LC_") {
			continue
		}
		out = append(out, kv)
	}
	return append(out, "LC_ALL=C")
}

// shellQuote quotes s for /bin/sh, which pg_ctl uses to start postgres with its -o options.
func shellQuote(s string) string {
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
