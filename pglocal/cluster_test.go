package pglocal

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
)

// requireBinaries fails the test when the server binaries are missing: this package's
// tests need them, and `make test` installs them.
func requireBinaries(t *testing.T) {
	t.Helper()
	if _, err := FindBinaries(); err != nil {
		t.Fatalf("pglocal tests need the PostgreSQL server binaries: %v", err)
	}
}

// syncBuffer is a bytes.Buffer safe for the concurrent writes of a logger.
type syncBuffer struct {
	mu  sync.Mutex
	buf bytes.Buffer
}

func (b *syncBuffer) Write(p []byte) (int, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.Write(p)
}

func (b *syncBuffer) String() string {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.String()
}

// searchableTempDir returns a temporary directory an unprivileged account can enter, so a
// cluster below it is not relocated when the tests run as root.
func searchableTempDir(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	// t.TempDir makes both its per-test parent and the dir itself with mode 0700.
	for _, d := range []string{filepath.Dir(dir), dir} {
		if err := os.Chmod(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// startCluster starts an ephemeral cluster and registers its Stop and removal.
func startCluster(t *testing.T, opts Options) *Cluster {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	c, err := Start(ctx, opts)
	if err != nil {
		t.Fatalf("Start(%+v): %v", opts, err)
	}
	t.Cleanup(func() {
		if err := c.Stop(context.Background()); err != nil {
			t.Errorf("Stop: %v", err)
		}
		if c.DataDir() != opts.DataDir {
			_ = os.RemoveAll(c.DataDir())
		}
	})
	return c
}

// queryString runs a one-value query on url.
func queryString(t *testing.T, url, sql string) string {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, url)
	if err != nil {
		t.Fatalf("connect %s: %v", url, err)
	}
	defer conn.Close(ctx)
	var s string
	if err := conn.QueryRow(ctx, sql).Scan(&s); err != nil {
		t.Fatalf("%s on %s: %v", sql, url, err)
	}
	return s
}

// execSQL runs a statement on url.
func execSQL(t *testing.T, url, sql string) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, url)
	if err != nil {
		t.Fatalf("connect %s: %v", url, err)
	}
	defer conn.Close(ctx)
	if _, err := conn.Exec(ctx, sql); err != nil {
		t.Fatalf("%s on %s: %v", sql, url, err)
	}
}

// processUID returns the real uid of a running process, from /proc.
func processUID(t *testing.T, pid int) int {
	t.Helper()
	data, err := os.ReadFile(fmt.Sprintf("/proc/%d/status", pid))
	if err != nil {
		t.Fatalf("read status of pid %d: %v", pid, err)
	}
	for _, line := range strings.Split(string(data), "\n") {
		if rest, ok := strings.CutPrefix(line, "Uid:"); ok {
			uid, err := strconv.Atoi(strings.Fields(rest)[0])
			if err != nil {
				t.Fatal(err)
			}
			return uid
		}
	}
	t.Fatalf("no Uid line for pid %d", pid)
	return -1
}

func TestStartConnectCreateStop(t *testing.T) {
	t.Parallel()
	requireBinaries(t)
	dataDir := filepath.Join(searchableTempDir(t), "nested", "pg")
	var log syncBuffer
	c := startCluster(t, Options{DataDir: dataDir, Ephemeral: true, Log: &log})

	if c.DataDir() != dataDir {
		t.Errorf("DataDir() = %q; want the requested %q (its parents are searchable)", c.DataDir(), dataDir)
	}
	wantPrefix := fmt.Sprintf("postgres://postgres@127.0.0.1:%d/", c.Port())
	if got := c.URL("halovet"); got != wantPrefix+"halovet?sslmode=disable" {
		t.Errorf("URL(halovet) = %q; want %q", got, wantPrefix+"halovet?sslmode=disable")
	}
	admin := c.URL("")
	if got := queryString(t, admin, "SELECT current_user"); got != Superuser {
		t.Errorf("current_user = %q; want %q", got, Superuser)
	}
	// Ephemeral clusters trade durability for speed; UTF8 is what initdb was asked for.
	for setting, want := range map[string]string{
		"fsync": "off", "synchronous_commit": "off", "full_page_writes": "off",
		"server_encoding": "UTF8", "listen_addresses": "127.0.0.1", "lc_collate": "C",
		"unix_socket_directories": dataDir,
	} {
		if got := queryString(t, admin, "SHOW "+setting); got != want {
			t.Errorf("SHOW %s = %q; want %q", setting, got, want)
		}
	}
	if _, err := os.Stat(filepath.Join(dataDir, fmt.Sprintf(".s.PGSQL.%d", c.Port()))); err != nil {
		t.Errorf("no Unix socket in the data dir: %v", err)
	}
	if fi, err := os.Stat(c.LogPath()); err != nil || fi.Size() == 0 {
		t.Errorf("server log %s missing or empty: %v", c.LogPath(), err)
	}

	// PostgreSQL refuses root; when the tests run as root the server must run as another user.
	// The postmaster (first line of postmaster.pid) lives as long as the cluster; a backend's
	// pid would be gone once its connection closed.
	pf, err := os.ReadFile(filepath.Join(c.DataDir(), "postmaster.pid"))
	if err != nil {
		t.Fatal(err)
	}
	first, _, _ := strings.Cut(string(pf), "\n")
	pid, err := strconv.Atoi(strings.TrimSpace(first))
	if err != nil {
		t.Fatal(err)
	}
	if uid := processUID(t, pid); os.Geteuid() == 0 && uid == 0 {
		t.Errorf("server %d runs as root", pid)
	} else if os.Geteuid() != 0 && uid != os.Geteuid() {
		t.Errorf("server %d runs as uid %d; want the caller's uid %d", pid, uid, os.Geteuid())
	}

	ctx := context.Background()
	for i := range 2 { // the second call finds the database and does nothing
		if err := EnsureDatabase(ctx, admin, "halovet_demo"); err != nil {
			t.Fatalf("EnsureDatabase call %d: %v", i+1, err)
		}
	}
	if got := queryString(t, c.URL("halovet_demo"), "SELECT current_database()"); got != "halovet_demo" {
		t.Errorf("current_database() = %q; want halovet_demo", got)
	}

	if err := c.Stop(ctx); err != nil {
		t.Fatalf("Stop: %v", err)
	}
	if err := c.Stop(ctx); err != nil {
		t.Errorf("second Stop: %v; want nil", err)
	}
	if _, err := os.Stat(filepath.Join(dataDir, pidFileName)); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("postmaster.pid after Stop: %v; want it gone", err)
	}
	if conn, err := pgx.Connect(ctx, admin); err == nil {
		conn.Close(ctx)
		t.Errorf("connect after Stop succeeded; want the server gone")
	}
}

func TestRestartKeepsData(t *testing.T) {
	t.Parallel()
	requireBinaries(t)
	dataDir := filepath.Join(searchableTempDir(t), "pg")
	first := startCluster(t, Options{DataDir: dataDir, Ephemeral: true})
	execSQL(t, first.URL(""), "CREATE TABLE kept (note text); INSERT INTO kept VALUES ('from the first run')")
	if err := first.Stop(context.Background()); err != nil {
		t.Fatal(err)
	}

	var log syncBuffer
	second := startCluster(t, Options{DataDir: dataDir, Log: &log})
	if strings.Contains(log.String(), "creating a PostgreSQL cluster") {
		t.Errorf("second Start ran initdb again; log:\n%s", log.String())
	}
	if got := queryString(t, second.URL(""), "SELECT note FROM kept"); got != "from the first run" {
		t.Errorf("row after restart = %q; want the one written before", got)
	}
	// Durability settings belong to each start, not to the cluster.
	if got := queryString(t, second.URL(""), "SHOW fsync"); got != "on" {
		t.Errorf("SHOW fsync = %q after a start without Ephemeral; want on", got)
	}
}

func TestStartAdoptsRunningServer(t *testing.T) {
	t.Parallel()
	requireBinaries(t)
	dataDir := filepath.Join(searchableTempDir(t), "pg")
	first := startCluster(t, Options{DataDir: dataDir, Ephemeral: true})
	ctx := context.Background()

	// While its owner lives, the cluster is never adopted, whatever the port asked for.
	for _, port := range []int{0, first.Port() + 1} {
		if _, err := Start(ctx, Options{DataDir: dataDir, Port: port}); !errors.Is(err, ErrInUse) {
			t.Errorf("Start (port %d) on a cluster whose owner is alive: %v; want ErrInUse", port, err)
		}
	}
	if got := queryString(t, first.URL(""), "SELECT 'still up'"); got != "still up" {
		t.Fatalf("refused adoption disturbed the running server")
	}

	// An owner that went away without stopping its server (its watchdog failed too) leaves
	// the server to be adopted; abandon stands in for that owner's death.
	first.abandon()
	if _, err := Start(ctx, Options{DataDir: dataDir, Port: first.Port() + 1}); err == nil ||
		!strings.Contains(err.Error(), "already runs") {
		t.Errorf("Start on an orphaned server with another port: %v; want an error saying a server already runs", err)
	}
	var log syncBuffer
	second := startCluster(t, Options{DataDir: dataDir, Log: &log})
	if second.Port() != first.Port() {
		t.Errorf("adopting cluster has port %d; want the running server's %d", second.Port(), first.Port())
	}
	if !strings.Contains(log.String(), "adopted") {
		t.Errorf("log does not say the server was adopted:\n%s", log.String())
	}
	if err := second.Stop(ctx); err != nil {
		t.Fatal(err)
	}
	// After a Stop the lock is free again: a new Start succeeds.
	third := startCluster(t, Options{DataDir: dataDir, Ephemeral: true})
	if err := third.Stop(ctx); err != nil {
		t.Fatal(err)
	}
}

// exitedPid returns the pid of a process that has finished.
func exitedPid(t *testing.T) int {
	t.Helper()
	cmd := exec.Command("true")
	if err := cmd.Run(); err != nil {
		t.Fatal(err)
	}
	return cmd.Process.Pid
}

// waitGone waits until pid no longer exists.
func waitGone(t *testing.T, pid int) {
	t.Helper()
	deadline := time.Now().Add(30 * time.Second)
	for time.Now().Before(deadline) {
		if err := syscall.Kill(pid, 0); errors.Is(err, syscall.ESRCH) {
			return
		}
		time.Sleep(50 * time.Millisecond)
	}
	t.Fatalf("pid %d still runs", pid)
}

func TestStartRemovesStalePidFile(t *testing.T) {
	t.Parallel()
	requireBinaries(t)
	tests := []struct {
		name string
		// spoil leaves the cluster's data dir as a crash would.
		spoil func(t *testing.T, c *Cluster)
	}{
		{
			name: "server killed with SIGKILL",
			spoil: func(t *testing.T, c *Cluster) {
				pf, err := readPidFile(c.DataDir())
				if err != nil {
					t.Fatal(err)
				}
				c.abandon() // as if the owner died too, and its watchdog could not clean up
				if err := syscall.Kill(pf.pid, syscall.SIGKILL); err != nil {
					t.Fatal(err)
				}
				waitGone(t, pf.pid)
			},
		},
		{
			name: "pid file naming a process that has exited",
			spoil: func(t *testing.T, c *Cluster) {
				stopAndWritePid(t, c, exitedPid(t))
			},
		},
		{
			name: "pid file naming a live process that is not postgres",
			spoil: func(t *testing.T, c *Cluster) {
				sleeper := exec.Command("sleep", "60")
				if err := sleeper.Start(); err != nil {
					t.Fatal(err)
				}
				t.Cleanup(func() { _ = sleeper.Process.Kill(); _ = sleeper.Wait() })
				stopAndWritePid(t, c, sleeper.Process.Pid)
			},
		},
	}
	// One cluster goes through every case in turn, which saves an initdb per case. The
	// first case needs a running server and gets the one started here; a server restarted
	// by a case is stopped when that case ends, and the later cases only need its data dir.
	dataDir := filepath.Join(searchableTempDir(t), "pg")
	current := startCluster(t, Options{DataDir: dataDir, Ephemeral: true})
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tt.spoil(t, current)
			if _, err := os.Stat(filepath.Join(dataDir, pidFileName)); err != nil {
				t.Fatalf("setup left no postmaster.pid: %v", err)
			}
			var log syncBuffer
			current = startCluster(t, Options{DataDir: dataDir, Ephemeral: true, Log: &log})
			if !strings.Contains(log.String(), "removed stale postmaster.pid") {
				t.Errorf("log does not report the stale pid file:\n%s", log.String())
			}
			if got := queryString(t, current.URL(""), "SELECT 'up again'"); got != "up again" {
				t.Errorf("query after restart = %q", got)
			}
		})
		if t.Failed() {
			return
		}
	}
}

// stopAndWritePid stops c and leaves a postmaster.pid naming pid, as a crash would.
func stopAndWritePid(t *testing.T, c *Cluster, pid int) {
	t.Helper()
	if err := c.Stop(context.Background()); err != nil {
		t.Fatal(err)
	}
	content := fmt.Sprintf("%d\n%s\n1700000000\n%d\n%s\n127.0.0.1\n  1234567     98304\nready   \n", pid, c.DataDir(), c.Port(), c.DataDir())
	path := filepath.Join(c.DataDir(), pidFileName)
	if err := os.WriteFile(path, []byte(content), 0o600); err != nil {
		t.Fatal(err)
	}
	if c.prog.acct.cred != nil {
		if err := os.Chown(path, int(c.prog.acct.uid), int(c.prog.acct.gid)); err != nil {
			t.Fatal(err)
		}
	}
}

func TestRootRelocatesUnreachableDataDir(t *testing.T) {
	t.Parallel()
	if os.Geteuid() != 0 {
		t.Skip("relocation only happens when running as root")
	}
	requireBinaries(t)
	private := t.TempDir() // mode 0700, owned by root: the server's account cannot enter it
	requested := filepath.Join(private, "pg")
	var log syncBuffer
	c := startCluster(t, Options{DataDir: requested, Ephemeral: true, Log: &log})
	if c.DataDir() == requested {
		t.Fatalf("DataDir() = requested %q below a 0700 root directory; want a relocated dir", requested)
	}
	if !strings.HasPrefix(filepath.Base(c.DataDir()), fmt.Sprintf("halovet-pg-%d-", os.Geteuid())) {
		t.Errorf("relocated dir %q is not named halovet-pg-<uid>-<hash>", c.DataDir())
	}
	if !strings.Contains(log.String(), c.DataDir()) || !strings.Contains(log.String(), private) {
		t.Errorf("log does not say where the cluster went and why:\n%s", log.String())
	}
	if err := c.Stop(context.Background()); err != nil {
		t.Fatal(err)
	}
	// The same request finds the same relocated cluster again.
	again := startCluster(t, Options{DataDir: requested, Ephemeral: true})
	if again.DataDir() != c.DataDir() {
		t.Errorf("second Start used %q; want the same relocated dir %q", again.DataDir(), c.DataDir())
	}
}

func TestStartRejectsBadOptions(t *testing.T) {
	tests := []struct {
		name string
		opts Options
		want error
	}{
		{"empty data dir", Options{}, ErrInvalidOptions},
		{"negative port", Options{DataDir: "x", Port: -1}, ErrInvalidOptions},
		{"port above 65535", Options{DataDir: "x", Port: 70000}, ErrInvalidOptions},
		{"negative max connections", Options{DataDir: "x", MaxConnections: -5}, ErrInvalidOptions},
		{"bin dir without the programs", Options{DataDir: "x", BinDir: "/nonexistent"}, ErrNoServerBinaries},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := Start(context.Background(), tt.opts); !errors.Is(err, tt.want) {
				t.Errorf("Start(%+v) = %v; want %v", tt.opts, err, tt.want)
			}
		})
	}
}

func TestEnsureDatabaseRejectsBadName(t *testing.T) {
	tests := []struct {
		name, db string
	}{
		{"empty", ""},
		{"64 bytes", strings.Repeat("d", 64)},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			// The name is checked before any connection is made, so no server is needed.
			err := EnsureDatabase(context.Background(), "postgres://nobody@127.0.0.1:1/x", tt.db)
			if !errors.Is(err, ErrInvalidDatabaseName) {
				t.Errorf("EnsureDatabase(%q) = %v; want ErrInvalidDatabaseName", tt.db, err)
			}
		})
	}
}
