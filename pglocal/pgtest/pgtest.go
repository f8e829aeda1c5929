package pgtest

import (
	"bytes"
	"context"
	"crypto/rand"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/halovet/halovet/pglocal"
	"github.com/jackc/pgx/v5"
)

// EnvURL names the environment variable with an admin URL of an existing server to use
// instead of a private cluster.
const EnvURL = "TEST_DATABASE_URL"

// maxConnections is max_connections of the private cluster: parallel tests each open
// pools of their own, and the server default of 100 runs out on machines with many CPUs.
const maxConnections = 300

// opTimeout bounds each database administration step and each template migration.
const opTimeout = 2 * time.Minute

// errNoMain reports a NewDatabase call from a test binary whose TestMain does not call Main.
var errNoMain = errors.New("pgtest: call pgtest.Main from this package's TestMain, which releases the test databases and stops the private cluster after the tests:\n\tfunc TestMain(m *testing.M) { pgtest.Main(m) }")

// run is the per-test-binary state: the server, this binary's identity on it, and its
// templates.
var run struct {
	mainActive atomic.Bool

	setupOnce sync.Once
	setupErr  error
	admin     string           // admin URL
	cluster   *pglocal.Cluster // nil when TEST_DATABASE_URL is used
	baseDir   string           // the private cluster's temporary directory
	id        string           // 16 hex digits naming this binary's databases
	lockKey   int64            // advisory lock key held while this binary runs
	presence  *pgx.Conn        // the session that holds lockKey
	sweepNote string           // a problem while sweeping, reported by the first test

	tplMu     sync.Mutex
	templates map[string]*template

	seq atomic.Int64 // numbers this binary's test databases
}

// template is one migrated template database, built on first use.
type template struct {
	once sync.Once
	db   string
	err  error
}

// Main runs the tests, then drops this binary's templates and stops the private cluster.
// Call it from TestMain; the test binary then exits with the tests' status (or 1 when the
// tests passed but the teardown failed).
func Main(m *testing.M) {
	run.mainActive.Store(true)
	code := m.Run()
	run.mainActive.Store(false)
	if err := teardown(); err != nil {
		fmt.Fprintln(os.Stderr, err)
		if code == 0 {
			os.Exit(1)
		}
	}
}

// AdminURL returns the admin URL of the test server (TEST_DATABASE_URL or the private
// cluster's maintenance database), starting the private cluster when needed.
func AdminURL(t testing.TB) string {
	t.Helper()
	if err := setup(); err != nil {
		t.Fatal(err)
	}
	return run.admin
}

// NewDatabase returns the URL of a new database for this test, a copy of the template
// templateName. The first call for a templateName in this test binary creates the template
// and runs migrate on its URL; migrate must close its connections before returning. The
// database is dropped when the test ends. Safe for parallel tests.
func NewDatabase(t testing.TB, templateName string, migrate func(ctx context.Context, url string) error) string {
	t.Helper()
	if templateName == "" || migrate == nil {
		t.Fatalf("pgtest: NewDatabase needs a template name and a migrate function (got name %q, migrate nil: %t)", templateName, migrate == nil)
	}
	if err := setup(); err != nil {
		t.Fatal(err)
	}
	if run.sweepNote != "" {
		t.Log(run.sweepNote)
	}
	tpl := templateFor(templateName)
	tpl.once.Do(func() { tpl.err = buildTemplate(tpl.db, migrate) })
	if tpl.err != nil {
		t.Fatalf("pgtest: template %q: %v", templateName, tpl.err)
	}

	name := fmt.Sprintf("halovet_test_%s_%d", run.id, run.seq.Add(1))
	if err := adminExec("CREATE DATABASE " + ident(name) + " TEMPLATE " + ident(tpl.db)); err != nil {
		t.Fatalf("pgtest: create test database from template %q: %v", templateName, err)
	}
	t.Cleanup(func() {
		if err := adminExec("DROP DATABASE IF EXISTS " + ident(name) + " WITH (FORCE)"); err != nil {
			t.Errorf("pgtest: drop test database %s: %v", name, err)
		}
	})
	u, err := withDatabase(run.admin, name)
	if err != nil {
		t.Fatal(err)
	}
	return u
}

// setup finds or starts the server once per test binary and claims this binary's id.
func setup() error {
	if !run.mainActive.Load() {
		return errNoMain
	}
	run.setupOnce.Do(func() { run.setupErr = setupOnce() })
	return run.setupErr
}

func setupOnce() error {
	var raw [8]byte
	if _, err := rand.Read(raw[:]); err != nil {
		return fmt.Errorf("pgtest: random run id: %w", err)
	}
	run.id = hex.EncodeToString(raw[:])
	run.lockKey = int64(binary.BigEndian.Uint64(raw[:]))
	run.templates = map[string]*template{}

	ctx, cancel := context.WithTimeout(context.Background(), opTimeout)
	defer cancel()
	if u := os.Getenv(EnvURL); u != "" {
		run.admin = u
	} else if err := startCluster(ctx); err != nil {
		return err
	}
	conn, err := pgx.Connect(ctx, run.admin)
	if err != nil {
		return fmt.Errorf("pgtest: connect to the test server (%s): %w", redact(run.admin), err)
	}
	if _, err := conn.Exec(ctx, "SELECT pg_advisory_lock($1)", run.lockKey); err != nil {
		conn.Close(ctx)
		return fmt.Errorf("pgtest: take this run's advisory lock: %w", err)
	}
	run.presence = conn
	if err := sweep(ctx, conn, run.id); err != nil {
		run.sweepNote = fmt.Sprintf("pgtest: could not drop databases left by earlier runs: %v", err)
	}
	return nil
}

// startCluster starts the private ephemeral cluster in a new temporary directory.
func startCluster(ctx context.Context) error {
	base, err := os.MkdirTemp("", "halovet-pgtest-")
	if err != nil {
		return fmt.Errorf("pgtest: temporary directory for the private cluster: %w", err)
	}
	// Searchable by the unprivileged account the server runs as when the tests run as root.
	if err := os.Chmod(base, 0o755); err != nil {
		return fmt.Errorf("pgtest: %w", err)
	}
	run.baseDir = base
	var log bytes.Buffer
	c, err := pglocal.Start(ctx, pglocal.Options{
		DataDir:        filepath.Join(base, "data"),
		Ephemeral:      true,
		MaxConnections: maxConnections,
		Log:            &log,
	})
	if err != nil {
		_ = os.RemoveAll(base)
		return fmt.Errorf("pgtest: start a private PostgreSQL cluster (set %s to use an existing server instead): %w\n%s", EnvURL, err, log.String())
	}
	run.cluster = c
	run.admin = c.URL("postgres")
	return nil
}

// templateFor returns the template record for name, creating an empty one on first use.
func templateFor(name string) *template {
	run.tplMu.Lock()
	defer run.tplMu.Unlock()
	tpl, ok := run.templates[name]
	if !ok {
		tpl = &template{db: fmt.Sprintf("halovet_tpl_%s_%d_%s", run.id, len(run.templates)+1, identPart(name, 20))}
		run.templates[name] = tpl
	}
	return tpl
}

// buildTemplate creates and migrates the template database and closes it to connections,
// since CREATE DATABASE ... TEMPLATE fails while anyone is connected to the template.
func buildTemplate(db string, migrate func(context.Context, string) error) error {
	// template0, unlike template1, never has sessions of other clients in it.
	if err := adminExec("CREATE DATABASE " + ident(db) + " TEMPLATE template0 ENCODING 'UTF8'"); err != nil {
		return fmt.Errorf("create template database: %w", err)
	}
	u, err := withDatabase(run.admin, db)
	if err != nil {
		return err
	}
	ctx, cancel := context.WithTimeout(context.Background(), opTimeout)
	defer cancel()
	if err := migrate(ctx, u); err != nil {
		_ = adminExec("DROP DATABASE IF EXISTS " + ident(db) + " WITH (FORCE)")
		return fmt.Errorf("migrate: %w", err)
	}
	if err := adminExec("ALTER DATABASE " + ident(db) + " WITH ALLOW_CONNECTIONS false"); err != nil {
		return fmt.Errorf("close template to connections: %w", err)
	}
	// Sessions the migrate function left open would block every clone.
	if err := adminExecArgs("SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE datname = $1 AND pid <> pg_backend_pid()", db); err != nil {
		return fmt.Errorf("end sessions left in the template: %w", err)
	}
	return nil
}

// teardown drops this binary's databases (on a shared server), releases its lock and
// stops the private cluster.
func teardown() error {
	if run.presence == nil && run.cluster == nil {
		return nil
	}
	var errs []error
	ctx, cancel := context.WithTimeout(context.Background(), opTimeout)
	defer cancel()
	if run.presence != nil {
		if run.cluster == nil {
			if err := dropRun(ctx, run.presence, run.id); err != nil {
				errs = append(errs, err)
			}
		}
		if err := run.presence.Close(ctx); err != nil {
			errs = append(errs, fmt.Errorf("pgtest: close the admin session: %w", err))
		}
		run.presence = nil
	}
	if run.cluster != nil {
		if err := run.cluster.Stop(ctx); err != nil {
			errs = append(errs, fmt.Errorf("pgtest: stop the private cluster: %w", err))
		} else if err := os.RemoveAll(run.baseDir); err != nil {
			errs = append(errs, fmt.Errorf("pgtest: remove the private cluster: %w", err))
		}
		run.cluster = nil
	}
	return errors.Join(errs...)
}

// runDatabase matches the names of databases pgtest makes and captures the run id.
var runDatabase = regexp.MustCompile(`^halovet_(?:test|tpl)_([0-9a-f]{16})_`)

// sweep drops the databases of runs other than self whose advisory lock nobody holds,
// that is, of test binaries that ended without tearing down.
func sweep(ctx context.Context, conn *pgx.Conn, self string) error {
	names, err := listNames(ctx, conn, "SELECT datname FROM pg_database WHERE datname LIKE 'halovet\\_%'")
	if err != nil {
		return fmt.Errorf("list databases: %w", err)
	}
	runs := map[string]bool{}
	for _, n := range names {
		if m := runDatabase.FindStringSubmatch(n); m != nil && m[1] != self {
			runs[m[1]] = true
		}
	}
	var errs []error
	for id := range runs {
		raw, err := hex.DecodeString(id)
		if err != nil {
			continue
		}
		key := int64(binary.BigEndian.Uint64(raw))
		var free bool
		if err := conn.QueryRow(ctx, "SELECT pg_try_advisory_lock($1)", key).Scan(&free); err != nil {
			errs = append(errs, err)
			continue
		}
		if !free {
			continue // that run is alive
		}
		errs = append(errs, dropRun(ctx, conn, id))
		if _, err := conn.Exec(ctx, "SELECT pg_advisory_unlock($1)", key); err != nil {
			errs = append(errs, err)
		}
	}
	return errors.Join(errs...)
}

// listNames runs a query returning database names.
func listNames(ctx context.Context, conn *pgx.Conn, sql string, args ...any) ([]string, error) {
	rows, err := conn.Query(ctx, sql, args...)
	if err != nil {
		return nil, err
	}
	return pgx.CollectRows(rows, pgx.RowTo[string])
}

// dropRun drops every database of run id (test databases first, then templates).
func dropRun(ctx context.Context, conn *pgx.Conn, id string) error {
	names, err := listNames(ctx, conn,
		"SELECT datname FROM pg_database WHERE datname LIKE 'halovet\\_test\\_' || $1 || '\\_%' OR datname LIKE 'halovet\\_tpl\\_' || $1 || '\\_%' ORDER BY datname DESC", id)
	if err != nil {
		return fmt.Errorf("pgtest: list databases of run %s: %w", id, err)
	}
	var errs []error
	for _, n := range names {
		if _, err := conn.Exec(ctx, "DROP DATABASE IF EXISTS "+ident(n)+" WITH (FORCE)"); err != nil {
			errs = append(errs, fmt.Errorf("pgtest: drop %s: %w", n, err))
		}
	}
	return errors.Join(errs...)
}

// adminExec runs one statement on a fresh admin session (CREATE and DROP DATABASE cannot
// share a session with concurrent callers, and cannot run inside a transaction).
func adminExec(sql string) error { return adminExecArgs(sql) }

func adminExecArgs(sql string, args ...any) error {
	ctx, cancel := context.WithTimeout(context.Background(), opTimeout)
	defer cancel()
	conn, err := pgx.Connect(ctx, run.admin)
	if err != nil {
		return fmt.Errorf("connect to the test server (%s): %w", redact(run.admin), err)
	}
	defer conn.Close(ctx)
	if _, err := conn.Exec(ctx, sql, args...); err != nil {
		return fmt.Errorf("%s: %w", sql, err)
	}
	return nil
}

// ident quotes a database name for SQL.
func ident(name string) string { return pgx.Identifier{name}.Sanitize() }

// identPart reduces s to at most n characters of [a-z0-9_] for use inside a name.
func identPart(s string, n int) string {
	var b strings.Builder
	for _, r := range strings.ToLower(s) {
		if b.Len() == n {
			break
		}
		if (r >= 'a' && r <= 'z') || (r >= '0' && r <= '9') || r == '_' {
			b.WriteRune(r)
		} else {
			b.WriteByte('_')
		}
	}
	return b.String()
}

// withDatabase returns the connection string admin with its database replaced by db.
// admin is a postgres:// or postgresql:// URL or a key=value string.
func withDatabase(admin, db string) (string, error) {
	if strings.HasPrefix(admin, "postgres://") || strings.HasPrefix(admin, "postgresql://") {
		u, err := url.Parse(admin)
		if err != nil {
			return "", fmt.Errorf("pgtest: %s is not a valid URL: %w", EnvURL, err)
		}
		u.Path = "/" + db
		u.RawPath = ""
		return u.String(), nil
	}
	// In key=value strings a later keyword overrides an earlier one.
	return strings.TrimSpace(admin) + " dbname=" + db, nil
}

// redact hides the password of a connection URL for messages.
func redact(admin string) string {
	u, err := url.Parse(admin)
	if err != nil || u.User == nil {
		if strings.Contains(admin, "password") {
			return "(connection string with a password)"
		}
		return admin
	}
	return u.Redacted()
}
