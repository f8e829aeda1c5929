package pglocal

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"syscall"
)

// watchdog is a small shell process that stops the server once the process that started
// the cluster is gone. It blocks reading a pipe whose only writer is this process; the
// kernel closes the writer when this process exits for any reason (including SIGKILL),
// the read returns, and the shell runs pg_ctl stop.
type watchdog struct {
	cmd    *exec.Cmd
	writer *os.File
}

// watchdogScript waits for end of input, then stops the server ($0 is pg_ctl, $1 the dir).
const watchdogScript = `read -r line; exec "$0" stop -D "$1" -m fast -s >/dev/null 2>&1`

// startWatchdog starts a watchdog for the cluster run by p.
func startWatchdog(p programs) (*watchdog, error) {
	r, w, err := os.Pipe()
	if err != nil {
		return nil, fmt.Errorf("pglocal: watchdog pipe: %w", err)
	}
	cmd := exec.Command("/bin/sh", "-c", watchdogScript, filepath.Join(p.binDir, "pg_ctl"), p.dataDir)
	p.prepare(cmd)
	if cmd.SysProcAttr == nil {
		cmd.SysProcAttr = &syscall.SysProcAttr{}
	}
	// Its own process group: a Ctrl-C aimed at the terminal's foreground group must not
	// kill the watchdog before this process has had the chance to stop the server itself.
	cmd.SysProcAttr.Setpgid = true
	cmd.Stdin = r
	if err := cmd.Start(); err != nil {
		_ = r.Close()
		_ = w.Close()
		return nil, fmt.Errorf("pglocal: start watchdog: %w", err)
	}
	_ = r.Close()
	return &watchdog{cmd: cmd, writer: w}, nil
}

// disarm ends the watchdog without letting it stop the server.
func (w *watchdog) disarm() {
	if w == nil {
		return
	}
	_ = w.cmd.Process.Kill()
	_ = w.cmd.Wait()
	_ = w.writer.Close()
}
