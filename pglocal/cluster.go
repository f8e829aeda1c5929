package pglocal

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"net"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/jackc/pgx/v5"
)

// Superuser is the database superuser of a private cluster. It logs in without a password
// (trust authentication), which the server accepts only on loopback and its Unix socket.
const Superuser = "postgres"

// ErrInvalidOptions reports an Options field that Start cannot use.
var ErrInvalidOptions = errors.New("pglocal: invalid options")

// errPortInUse marks a start that failed because another process took the port.
var errPortInUse = errors.New("port already in use")

// errOldServerAlive marks a start that failed because backends of a killed server still
// hold its shared memory.
var errOldServerAlive = errors.New("processes of an earlier server still run")

// serverLogName is the file in the data dir that receives the server's own log.
const serverLogName = "server.log"

// maxSocketPath is the longest Unix socket path the kernel accepts (sun_path less its NUL).
const maxSocketPath = 107

// pgctlTimeout bounds how long pg_ctl waits for a start or stop, in seconds.
const pgctlTimeout = "120"

// Options configure Start.
type Options struct {
	// DataDir holds the cluster. Required. It is created when absent; a directory that
	// already holds an initialised cluster is reused with its data. When running as root
	// the cluster may live elsewhere (see the package doc); Cluster.DataDir says where.
	DataDir string
	// Port is the loopback TCP port to listen on; 0 picks a free one.
	Port int
	// Ephemeral trades durability for speed, for tests: initdb --no-sync, and fsync,
	// synchronous_commit and full_page_writes off. A machine crash can corrupt the cluster.
	Ephemeral bool
	// MaxConnections sets max_connections; 0 keeps the server default (100).
	MaxConnections int
	// BinDir holds initdb, pg_ctl and postgres; empty means FindBinaries.
	BinDir string
	// Log receives pglocal's own progress lines (one per line, prefixed "pglocal: ");
	// nil discards them. The server writes its own log to Cluster.LogPath, a file in the
	// data dir.
	Log io.Writer
}

// Cluster is a running private PostgreSQL server. Its methods are safe for concurrent use.
type Cluster struct {
	prog    programs
	port    int
	logPath string
	logf    func(format string, args ...any)

	mu      sync.Mutex
	wd      *watchdog
	lock    *dirLock
	stopped bool
}

// Start initialises the cluster in opts.DataDir when it is not yet one, and starts its
// server on 127.0.0.1 (and a Unix socket in the data dir), returning once the server
// accepts connections. The superuser is Superuser, with trust authentication. Call Stop
// when done; if the process ends without it, a watchdog stops the server.
func Start(ctx context.Context, opts Options) (*Cluster, error) {
	if strings.TrimSpace(opts.DataDir) == "" {
		return nil, fmt.Errorf("%w: DataDir is empty; give the directory to keep the cluster in (for example DefaultDataDir())", ErrInvalidOptions)
	}
	if opts.Port < 0 || opts.Port > 65535 {
		return nil, fmt.Errorf("%w: Port is %d; accepted are 0 (pick a free port) or 1-65535", ErrInvalidOptions, opts.Port)
	}
	if opts.MaxConnections < 0 {
		return nil, fmt.Errorf("%w: MaxConnections is %d; accepted are 0 (server default) or a positive number", ErrInvalidOptions, opts.MaxConnections)
	}
	logf := newLogf(opts.Log)
	binDir := opts.BinDir
	if binDir == "" {
		var err error
		if binDir, err = FindBinaries(); err != nil {
			return nil, err
		}
	} else if !hasServerPrograms(binDir) {
		return nil, fmt.Errorf("%w: BinDir %s lacks one of %v", ErrNoServerBinaries, binDir, serverPrograms)
	}
	requested, err := filepath.Abs(opts.DataDir)
	if err != nil {
		return nil, fmt.Errorf("%w: DataDir %q: %w", ErrInvalidOptions, opts.DataDir, err)
	}
	pl, err := place(requested, logf)
	if err != nil {
		return nil, err
	}
	c := &Cluster{
		prog:    programs{binDir: binDir, dataDir: pl.dir, acct: pl.acct},
		logPath: filepath.Join(pl.dir, serverLogName),
		logf:    logf,
	}
	// The lock comes first, so that two processes never initialise or start one cluster
	// together, and a server that another live process started is never adopted: that
	// process stops it when it ends, and this one would lose its database mid-work.
	if c.lock, err = lockDir(pl.dir); err != nil {
		return nil, err
	}
	if !initialised(pl.dir) {
		if err := c.initdb(ctx, opts.Ephemeral); err != nil {
			c.lock.release()
			return nil, err
		}
	}
	state, err := c.prog.inspect(ctx, logf)
	if err != nil {
		c.lock.release()
		return nil, err
	}
	// The watchdog starts before the server so that no window exists in which this process
	// could die and leave the server running.
	if c.wd, err = startWatchdog(c.prog); err != nil {
		c.lock.release()
		return nil, err
	}
	if state.running {
		if err := c.adopt(ctx, state.pid, opts.Port); err != nil {
			// Not adopted: the server stays as it was, and is not this process's to stop.
			c.wd.disarm()
			c.lock.release()
			return nil, err
		}
	} else if err := c.start(ctx, opts); err != nil {
		c.stopAfterFailure(ctx)
		return nil, err
	}
	if err := c.ping(ctx); err != nil {
		c.stopAfterFailure(ctx)
		return nil, err
	}
	return c, nil
}

// stopAfterFailure stops whatever a failed Start left running, even if ctx is done.
func (c *Cluster) stopAfterFailure(ctx context.Context) {
	stopCtx, cancel := context.WithTimeout(context.WithoutCancel(ctx), 30*time.Second)
	defer cancel()
	_ = c.Stop(stopCtx)
}

// newLogf returns a printf-style logger writing "pglocal: " lines to w (nil: discard).
func newLogf(w io.Writer) func(string, ...any) {
	if w == nil {
		return func(string, ...any) {}
	}
	var mu sync.Mutex
	return func(format string, args ...any) {
		mu.Lock()
		defer mu.Unlock()
		fmt.Fprintf(w, "pglocal: "+format+"\n", args...)
	}
}

// initdb creates the cluster: UTF8 encoding, C locale (byte-order collation, the same on
// every machine), the Superuser role, and trust authentication for local connections.
func (c *Cluster) initdb(ctx context.Context, ephemeral bool) error {
	c.logf("creating a PostgreSQL cluster in %s (%s/initdb, run as %s)", c.prog.dataDir, c.prog.binDir, c.prog.acct.name)
	args := []string{"-D", c.prog.dataDir, "-U", Superuser, "--auth=trust", "--encoding=UTF8", "--locale=C"}
	if ephemeral {
		args = append(args, "--no-sync")
	}
	if _, err := c.prog.run(ctx, "initdb", args...); err != nil {
		return err
	}
	return nil
}

// adopt takes over a server an earlier run left running on the data dir.
func (c *Cluster) adopt(ctx context.Context, pf pidFile, wantPort int) error {
	if wantPort != 0 && pf.port != wantPort {
		return fmt.Errorf("pglocal: a server (pid %d) from an earlier run already runs on %s with port %d, not the requested port %d; stop it with: %s stop -D %s",
			pf.pid, c.prog.dataDir, pf.port, wantPort, filepath.Join(c.prog.binDir, "pg_ctl"), c.prog.dataDir)
	}
	for pf.status != "ready" {
		select {
		case <-ctx.Done():
			return fmt.Errorf("pglocal: waiting for the running server (pid %d) on %s to be ready: %w", pf.pid, c.prog.dataDir, ctx.Err())
		case <-time.After(100 * time.Millisecond):
		}
		var err error
		if pf, err = readPidFile(c.prog.dataDir); err != nil {
			return fmt.Errorf("pglocal: the running server on %s went away while pglocal waited for it: %w", c.prog.dataDir, err)
		}
	}
	c.port = pf.port
	c.logf("adopted the server (pid %d, port %d) an earlier run left running on %s", pf.pid, pf.port, c.prog.dataDir)
	return nil
}

// startAttempts bounds the starts tried when a start fails for a passing reason.
const startAttempts = 5

// start starts the server with pg_ctl. It tries again with another port when a picked free
// port was taken by someone else in the meantime, and after a pause when processes of a
// killed earlier server still hold its shared memory (they exit once they notice).
func (c *Cluster) start(ctx context.Context, opts Options) error {
	for i := 1; ; i++ {
		port := opts.Port
		if port == 0 {
			var err error
			if port, err = freePort(); err != nil {
				return err
			}
		}
		err := c.startOn(ctx, port, opts)
		if err == nil {
			c.port = port
			c.logf("PostgreSQL listens on 127.0.0.1:%d (data %s, log %s)", port, c.prog.dataDir, c.logPath)
			return nil
		}
		switch {
		case i >= startAttempts:
			return err
		case errors.Is(err, errPortInUse) && opts.Port == 0:
			c.logf("port %d was taken before the server could bind it; trying another", port)
		case errors.Is(err, errOldServerAlive):
			c.logf("processes of an earlier server on %s are still exiting; trying again in a second", c.prog.dataDir)
			select {
			case <-ctx.Done():
				return err
			case <-time.After(time.Second):
			}
		default:
			return err
		}
	}
}

// startOn runs pg_ctl start for one port and reports the server log's complaint on failure.
func (c *Cluster) startOn(ctx context.Context, port int, opts Options) error {
	settings := []string{
		"listen_addresses=127.0.0.1",
		"port=" + strconv.Itoa(port),
	}
	socketDir := c.prog.dataDir
	if len(socketDir)+len("/.s.PGSQL.65535") > maxSocketPath {
		c.logf("the data dir path is too long for a Unix socket; the server listens on TCP only")
		socketDir = ""
	}
	settings = append(settings, "unix_socket_directories="+socketDir)
	if opts.Ephemeral {
		settings = append(settings, "fsync=off", "synchronous_commit=off", "full_page_writes=off")
	}
	if opts.MaxConnections > 0 {
		settings = append(settings, "max_connections="+strconv.Itoa(opts.MaxConnections))
	}
	var serverOpts []string
	for _, s := range settings {
		serverOpts = append(serverOpts, "-c", shellQuote(s))
	}
	offset := int64(0)
	if fi, err := os.Stat(c.logPath); err == nil {
		offset = fi.Size()
	}
	_, err := c.prog.run(ctx, "pg_ctl", "start", "-D", c.prog.dataDir, "-l", c.logPath, "-w", "-t", pgctlTimeout, "-s",
		"-o", strings.Join(serverOpts, " "))
	if err == nil {
		return nil
	}
	tail := logSince(c.logPath, offset)
	switch {
	case strings.Contains(tail, "pre-existing shared memory block"):
		return fmt.Errorf("%w: %w; server log:\n%s", errOldServerAlive, err, tail)
	case strings.Contains(tail, "could not bind") || strings.Contains(tail, "already in use"):
		return fmt.Errorf("%w: %w; server log:\n%s", errPortInUse, err, tail)
	}
	return fmt.Errorf("%w; server log (%s):\n%s", err, c.logPath, tail)
}

// logSince returns at most the last 20 lines written to path after offset.
func logSince(path string, offset int64) string {
	f, err := os.Open(path)
	if err != nil {
		return "(no server log: " + err.Error() + ")"
	}
	defer f.Close()
	if _, err := f.Seek(offset, io.SeekStart); err != nil {
		return "(server log unreadable: " + err.Error() + ")"
	}
	data, err := io.ReadAll(io.LimitReader(f, 1<<20))
	if err != nil {
		return "(server log unreadable: " + err.Error() + ")"
	}
	lines := strings.Split(strings.TrimRight(string(data), "\n"), "\n")
	if len(lines) > 20 {
		lines = lines[len(lines)-20:]
	}
	return strings.Join(lines, "\n")
}

// freePort returns a loopback TCP port that was free a moment ago.
func freePort() (int, error) {
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		return 0, fmt.Errorf("pglocal: find a free loopback port: %w", err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port, nil
}

// ping checks that the server answers as Superuser.
func (c *Cluster) ping(ctx context.Context) error {
	ctx, cancel := context.WithTimeout(ctx, 30*time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, c.URL("postgres"))
	if err != nil {
		return fmt.Errorf("pglocal: connect to the new server on port %d: %w", c.port, err)
	}
	defer conn.Close(context.WithoutCancel(ctx))
	if err := conn.Ping(ctx); err != nil {
		return fmt.Errorf("pglocal: ping the new server on port %d: %w", c.port, err)
	}
	return nil
}

// URL returns a connection URL for database on this cluster as Superuser over loopback
// TCP, for example postgres://postgres@127.0.0.1:54321/halovet?sslmode=disable. An empty
// database means the "postgres" maintenance database.
func (c *Cluster) URL(database string) string {
	if database == "" {
		database = "postgres"
	}
	u := url.URL{
		Scheme:   "postgres",
		User:     url.User(Superuser),
		Host:     net.JoinHostPort("127.0.0.1", strconv.Itoa(c.port)),
		Path:     "/" + database,
		RawQuery: "sslmode=disable",
	}
	return u.String()
}

// Port returns the loopback TCP port the server listens on.
func (c *Cluster) Port() int { return c.port }

// DataDir returns the directory the cluster lives in (not always the one requested: see
// the package doc on running as root).
func (c *Cluster) DataDir() string { return c.prog.dataDir }

// LogPath returns the server's log file.
func (c *Cluster) LogPath() string { return c.logPath }

// Stop stops the server (pg_ctl stop -m fast: open sessions are ended, then a clean
// shutdown) and waits for it to exit. Calling it again, or on a server already gone,
// returns nil.
func (c *Cluster) Stop(ctx context.Context) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.stopped {
		return nil
	}
	defer c.lock.release()
	c.wd.disarm()
	c.wd = nil
	state, err := c.prog.inspect(ctx, c.logf)
	if err != nil {
		return err
	}
	if state.running {
		if _, err := c.prog.run(ctx, "pg_ctl", "stop", "-D", c.prog.dataDir, "-m", "fast", "-w", "-t", pgctlTimeout, "-s"); err != nil {
			// A server that finished stopping by itself meanwhile is what was wanted.
			if _, statErr := readPidFile(c.prog.dataDir); !errors.Is(statErr, fs.ErrNotExist) {
				return err
			}
		}
		c.logf("stopped the server on %s", c.prog.dataDir)
	}
	c.stopped = true
	return nil
}
