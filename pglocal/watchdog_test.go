package pglocal

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
)

// helperDataDirEnv makes TestWatchdogHelperProcess act as a process that owns a cluster.
const helperDataDirEnv = "PGLOCAL_TEST_HELPER_DATADIR"

// TestWatchdogHelperProcess is not a test: run by TestWatchdogStopsServerWhenOwnerDies in a
// child process, it starts a cluster, reports it on stdout and waits to be killed.
func TestWatchdogHelperProcess(t *testing.T) {
	dir := os.Getenv(helperDataDirEnv)
	if dir == "" {
		t.Skip("helper process for TestWatchdogStopsServerWhenOwnerDies")
	}
	c, err := Start(context.Background(), Options{DataDir: dir, Ephemeral: true})
	if err != nil {
		fmt.Printf("ERROR %v\n", err)
		os.Exit(1)
	}
	fmt.Printf("READY %s %s\n", c.DataDir(), c.URL(""))
	time.Sleep(time.Minute)
	os.Exit(2) // never reached when the parent kills this process as planned
}

func TestWatchdogStopsServerWhenOwnerDies(t *testing.T) {
	t.Parallel()
	requireBinaries(t)
	dir := filepath.Join(searchableTempDir(t), "pg")
	child := exec.Command(os.Args[0], "-test.run=^TestWatchdogHelperProcess$", "-test.count=1")
	child.Env = append(os.Environ(), helperDataDirEnv+"="+dir)
	out, err := child.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := child.Start(); err != nil {
		t.Fatal(err)
	}
	line, err := bufio.NewReader(out).ReadString('\n')
	if err != nil || !strings.HasPrefix(line, "READY ") {
		_ = child.Process.Kill()
		_ = child.Wait()
		t.Fatalf("helper did not start a cluster: %q, %v", line, err)
	}
	fields := strings.Fields(line)
	dataDir, url := fields[1], fields[2]
	pf, err := readPidFile(dataDir)
	if err != nil {
		t.Fatalf("no postmaster.pid while the helper's server runs: %v", err)
	}

	// SIGKILL leaves the helper no chance to call Stop; only the watchdog can act.
	if err := child.Process.Kill(); err != nil {
		t.Fatal(err)
	}
	_ = child.Wait()

	waitGone(t, pf.pid)
	if _, err := os.Stat(filepath.Join(dataDir, pidFileName)); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("postmaster.pid after the watchdog stopped the server: %v; want none (clean shutdown)", err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	if conn, err := pgx.Connect(ctx, url); err == nil {
		conn.Close(ctx)
		t.Errorf("server at %s still answers after its owner died", url)
	}
}
