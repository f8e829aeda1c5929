package pglocal

import (
	"context"
	"os"
	"os/user"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"

	"github.com/jackc/pgx/v5"
)

// These tests change fallbackAccounts, so they must not run in parallel; Go runs the
// parallel tests of this package only after every sequential test has returned.

func TestRootFallsBackToNobody(t *testing.T) {
	if os.Geteuid() != 0 {
		t.Skip("the account fallback only applies when running as root")
	}
	requireBinaries(t)
	nobody, err := user.Lookup("nobody")
	if err != nil {
		t.Skipf("no nobody account here: %v", err)
	}
	saved := fallbackAccounts
	fallbackAccounts = []string{"halovet-no-such-account", "nobody"}
	defer func() { fallbackAccounts = saved }()

	c := startCluster(t, Options{DataDir: filepath.Join(searchableTempDir(t), "pg"), Ephemeral: true})
	// The backend is read while its connection is open: it exits when the connection closes.
	ctx := context.Background()
	conn, err := pgx.Connect(ctx, c.URL(""))
	if err != nil {
		t.Fatal(err)
	}
	var pid int
	if err := conn.QueryRow(ctx, "SELECT pg_backend_pid()").Scan(&pid); err != nil {
		t.Fatal(err)
	}
	uid := processUID(t, pid)
	conn.Close(ctx)
	if got := strconv.Itoa(uid); got != nobody.Uid {
		t.Errorf("backend runs as uid %s; want nobody's uid %s", got, nobody.Uid)
	}

	// Concurrent EnsureDatabase calls for one name all succeed (one creates, the others
	// find it or lose the race on the unique name, which counts as success).
	var wg sync.WaitGroup
	errs := make([]error, 4)
	for i := range errs {
		wg.Go(func() { errs[i] = EnsureDatabase(context.Background(), c.URL(""), "raced") })
	}
	wg.Wait()
	for i, err := range errs {
		if err != nil {
			t.Errorf("concurrent EnsureDatabase %d: %v", i, err)
		}
	}
}

func TestRootWithoutUnprivilegedAccount(t *testing.T) {
	if os.Geteuid() != 0 {
		t.Skip("the account fallback only applies when running as root")
	}
	requireBinaries(t)
	saved := fallbackAccounts
	fallbackAccounts = []string{"halovet-no-such-account"}
	defer func() { fallbackAccounts = saved }()

	_, err := Start(context.Background(), Options{DataDir: filepath.Join(searchableTempDir(t), "pg")})
	if err == nil || !strings.Contains(err.Error(), "useradd") {
		t.Errorf("Start without any unprivileged account = %v; want an error saying how to create one", err)
	}
}

func TestDefaultDataDir(t *testing.T) {
	tests := []struct {
		name, xdg, home string
		euid            int
		want            string
	}{
		{"XDG_DATA_HOME wins", "/srv/data", "/home/ann", 1000, "/srv/data/halovet/postgres"},
		{"relative XDG_DATA_HOME is ignored", "data", "/home/ann", 1000, "/home/ann/.local/share/halovet/postgres"},
		{"home fallback", "", "/home/ann", 1000, "/home/ann/.local/share/halovet/postgres"},
		{"root: a system directory, not /root", "", "/root", 0, "/var/lib/halovet/postgres"},
		{"root: XDG_DATA_HOME still wins", "/srv/data", "/root", 0, "/srv/data/halovet/postgres"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Setenv("XDG_DATA_HOME", tt.xdg)
			t.Setenv("HOME", tt.home)
			got, err := defaultDataDir(tt.euid)
			if err != nil || got != tt.want {
				t.Errorf("defaultDataDir(%d) = %q, %v; want %q", tt.euid, got, err, tt.want)
			}
		})
	}
}
