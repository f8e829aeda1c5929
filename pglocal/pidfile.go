package pglocal

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
)

// pidFile is what postmaster.pid says about a running (or once running) server. Its lines
// are: pid, data dir, start time, port, socket dir, listen address, shared memory key, status.
type pidFile struct {
	pid    int
	port   int
	status string // "starting", "ready" or "stopping"; empty when not written yet
}

// pidFileName is the lock file postgres keeps in its data dir while it runs.
const pidFileName = "postmaster.pid"

// readPidFile parses dataDir/postmaster.pid; it returns fs.ErrNotExist when there is none.
func readPidFile(dataDir string) (pidFile, error) {
	data, err := os.ReadFile(filepath.Join(dataDir, pidFileName))
	if err != nil {
		return pidFile{}, err
	}
	lines := strings.Split(string(data), "\n")
	var pf pidFile
	if len(lines) > 0 {
		pf.pid, err = strconv.Atoi(strings.TrimSpace(lines[0]))
		if err != nil {
			return pidFile{}, fmt.Errorf("pglocal: %s line 1 (pid) is %q, not a number: %w", pidFileName, lines[0], err)
		}
	}
	if len(lines) > 3 {
		pf.port, _ = strconv.Atoi(strings.TrimSpace(lines[3]))
	}
	if len(lines) > 7 {
		pf.status = strings.TrimSpace(lines[7])
	}
	return pf, nil
}

// serverState is what pglocal finds on a data dir before starting a server.
type serverState struct {
	running bool
	pid     pidFile
}

// inspect reports whether a server runs on the data dir, removing a postmaster.pid left by
// a server that is gone. pg_ctl status decides first (exit status 0 running, 3 not
// running); a pid it calls alive is then checked to be a postgres process, since after a
// reboot or in a container the recorded pid can belong to an unrelated process.
func (p programs) inspect(ctx context.Context, logf func(string, ...any)) (serverState, error) {
	pf, err := readPidFile(p.dataDir)
	if errors.Is(err, fs.ErrNotExist) {
		return serverState{}, nil
	}
	stale := err != nil
	if !stale {
		_, err := p.run(ctx, "pg_ctl", "status", "-D", p.dataDir)
		var exit *exec.ExitError
		switch {
		case err == nil:
			if isPostgresProcess(pf.pid) {
				return serverState{running: true, pid: pf}, nil
			}
			stale = true
		case errors.As(err, &exit) && exit.ExitCode() == 3:
			stale = true
		default:
			return serverState{}, err
		}
	}
	if stale {
		if err := os.Remove(filepath.Join(p.dataDir, pidFileName)); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return serverState{}, fmt.Errorf("pglocal: remove stale %s: %w", pidFileName, err)
		}
		logf("removed stale %s in %s (pid %d no longer runs postgres)", pidFileName, p.dataDir, pf.pid)
	}
	return serverState{}, nil
}

// isPostgresProcess reports whether pid runs postgres, judged from /proc/<pid>/cmdline.
// Where that cannot be read (no /proc, hidden processes), it trusts pg_ctl and says yes.
func isPostgresProcess(pid int) bool {
	if _, err := os.Stat("/proc/self/cmdline"); err != nil {
		return true
	}
	data, err := os.ReadFile(filepath.Join("/proc", strconv.Itoa(pid), "cmdline"))
	if err != nil {
		return !errors.Is(err, fs.ErrNotExist)
	}
	if len(data) == 0 {
		return false // a zombie or kernel thread
	}
	arg0, _, _ := bytes.Cut(data, []byte{0})
	base := filepath.Base(string(arg0))
	return base == "postgres" || base == "postmaster" || strings.HasPrefix(string(arg0), "postgres:")
}
