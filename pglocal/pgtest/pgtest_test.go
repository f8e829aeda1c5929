package pgtest

import (
	"context"
	"crypto/rand"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"runtime"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
)

func TestMain(m *testing.M) { Main(m) }

// sampleMigrations counts how often migrateSample runs.
var sampleMigrations atomic.Int32

// migrateSample is a migration for the tests: one table with one row.
func migrateSample(ctx context.Context, url string) error {
	sampleMigrations.Add(1)
	conn, err := pgx.Connect(ctx, url)
	if err != nil {
		return err
	}
	defer conn.Close(ctx)
	_, err = conn.Exec(ctx, `CREATE TABLE sample (id int PRIMARY KEY, note text NOT NULL);
		INSERT INTO sample VALUES (0, 'from the template')`)
	return err
}

// scalar runs a one-value query on url.
func scalar[T any](t *testing.T, url, sql string, args ...any) T {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, url)
	if err != nil {
		t.Fatalf("connect: %v", err)
	}
	defer conn.Close(ctx)
	var v T
	if err := conn.QueryRow(ctx, sql, args...).Scan(&v); err != nil {
		t.Fatalf("%s: %v", sql, err)
	}
	return v
}

// databaseExists reports whether the test server has a database called name.
func databaseExists(t *testing.T, name string) bool {
	t.Helper()
	return scalar[bool](t, AdminURL(t), "SELECT EXISTS (SELECT 1 FROM pg_database WHERE datname = $1)", name)
}

func TestNewDatabaseGivesEachTestItsOwnMigratedCopy(t *testing.T) {
	names := sync.Map{}
	t.Run("group", func(t *testing.T) {
		for i := range 4 {
			t.Run(fmt.Sprintf("test%d", i), func(t *testing.T) {
				t.Parallel()
				url := NewDatabase(t, "sample", migrateSample)
				db := scalar[string](t, url, "SELECT current_database()")
				if _, dup := names.LoadOrStore(db, i); dup {
					t.Errorf("database %s handed out twice", db)
				}
				if got := scalar[string](t, url, "SELECT note FROM sample WHERE id = 0"); got != "from the template" {
					t.Errorf("migrated row = %q; want the template's", got)
				}
				// Each test writes its own row; seeing exactly two rows proves no other
				// test's writes reached this database.
				ctx := context.Background()
				conn, err := pgx.Connect(ctx, url)
				if err != nil {
					t.Fatal(err)
				}
				defer conn.Close(ctx)
				if _, err := conn.Exec(ctx, "INSERT INTO sample VALUES ($1, 'mine')", i+1); err != nil {
					t.Fatal(err)
				}
				if n := scalar[int64](t, url, "SELECT count(*) FROM sample"); n != 2 {
					t.Errorf("rows = %d; want 2 (template row and this test's own)", n)
				}
			})
		}
	})
	if n := sampleMigrations.Load(); n != 1 {
		t.Errorf("migrate ran %d times; want once per test binary", n)
	}
	// The parallel tests have ended, so their cleanups have dropped their databases.
	names.Range(func(db, _ any) bool {
		if databaseExists(t, db.(string)) {
			t.Errorf("database %s still exists after its test ended", db)
		}
		return true
	})
}

// fatalRecorder is a testing.TB whose Fatal stops only the goroutine that called it and
// records the message, so a test can check what NewDatabase reports.
type fatalRecorder struct {
	testing.TB
	mu  sync.Mutex
	msg string
}

func (r *fatalRecorder) Fatalf(format string, args ...any) {
	r.mu.Lock()
	r.msg = fmt.Sprintf(format, args...)
	r.mu.Unlock()
	runtime.Goexit()
}

func (r *fatalRecorder) Fatal(args ...any) { r.Fatalf("%s", fmt.Sprint(args...)) }

// call runs NewDatabase in its own goroutine and returns the recorded failure, if any.
func (r *fatalRecorder) call(templateName string, migrate func(context.Context, string) error) string {
	done := make(chan struct{})
	go func() {
		defer close(done)
		NewDatabase(r, templateName, migrate)
	}()
	<-done
	r.mu.Lock()
	defer r.mu.Unlock()
	return r.msg
}

// brokenRuns numbers the runs of TestNewDatabaseReportsMigrationFailureOnce.
var brokenRuns atomic.Int32

func TestNewDatabaseReportsMigrationFailureOnce(t *testing.T) {
	var calls atomic.Int32
	failing := func(ctx context.Context, url string) error {
		calls.Add(1)
		return errors.New("migration 0002 is broken")
	}
	// A name of its own per run, so -count=N runs find no remembered failure.
	name := fmt.Sprintf("broken%d", brokenRuns.Add(1))
	for i := range 2 {
		r := &fatalRecorder{TB: t}
		msg := r.call(name, failing)
		if !strings.Contains(msg, fmt.Sprintf("template %q", name)) || !strings.Contains(msg, "migration 0002 is broken") {
			t.Errorf("call %d failed with %q; want the template name and the migration's error", i+1, msg)
		}
	}
	if n := calls.Load(); n != 1 {
		t.Errorf("failing migrate ran %d times; want once (the failure is remembered)", n)
	}
	r := &fatalRecorder{TB: t}
	if msg := r.call("", migrateSample); !strings.Contains(msg, "template name") {
		t.Errorf("empty template name gave %q; want a message asking for one", msg)
	}
}

func TestTemplateSurvivesMigrateLeavingASessionOpen(t *testing.T) {
	var leaked *pgx.Conn
	leaky := func(ctx context.Context, url string) error {
		conn, err := pgx.Connect(ctx, url)
		if err != nil {
			return err
		}
		leaked = conn // never closed: pgtest must end this session itself
		_, err = conn.Exec(ctx, "CREATE TABLE leaky (id int)")
		return err
	}
	url := NewDatabase(t, "leaky", leaky)
	if n := scalar[int64](t, url, "SELECT count(*) FROM leaky"); n != 0 {
		t.Errorf("rows in cloned table = %d; want 0", n)
	}
	if leaked != nil && !leaked.IsClosed() {
		// The server ended the session; closing the client side just frees it.
		_ = leaked.Close(context.Background())
	}
}

// randomRun returns a fresh run id and its advisory lock key.
func randomRun(t *testing.T) (string, int64) {
	t.Helper()
	var raw [8]byte
	if _, err := rand.Read(raw[:]); err != nil {
		t.Fatal(err)
	}
	return hex.EncodeToString(raw[:]), int64(binary.BigEndian.Uint64(raw[:]))
}

func TestSweepDropsOnlyDatabasesOfDeadRuns(t *testing.T) {
	admin := AdminURL(t)
	ctx := context.Background()
	// Random run ids, so test binaries running at once on one server do not collide.
	dead, _ := randomRun(t)
	alive, aliveKey := randomRun(t)
	deadDBs := []string{"halovet_test_" + dead + "_1", "halovet_tpl_" + dead + "_1_sample"}
	aliveDB := "halovet_test_" + alive + "_1"
	for _, db := range append(deadDBs, aliveDB) {
		if err := adminExec("CREATE DATABASE " + ident(db)); err != nil {
			t.Fatal(err)
		}
	}
	t.Cleanup(func() {
		for _, db := range append(deadDBs, aliveDB) {
			_ = adminExec("DROP DATABASE IF EXISTS " + ident(db) + " WITH (FORCE)")
		}
	})
	// Another live run holds its lock on its own session.
	holder, err := pgx.Connect(ctx, admin)
	if err != nil {
		t.Fatal(err)
	}
	defer holder.Close(ctx)
	if _, err := holder.Exec(ctx, "SELECT pg_advisory_lock($1)", aliveKey); err != nil {
		t.Fatal(err)
	}
	// This run's own databases must survive too.
	own := NewDatabase(t, "sample", migrateSample)
	ownDB := scalar[string](t, own, "SELECT current_database()")

	sweeper, err := pgx.Connect(ctx, admin)
	if err != nil {
		t.Fatal(err)
	}
	defer sweeper.Close(ctx)
	if err := sweep(ctx, sweeper, run.id); err != nil {
		t.Fatalf("sweep: %v", err)
	}
	for _, db := range deadDBs {
		if databaseExists(t, db) {
			t.Errorf("%s of a dead run survived the sweep", db)
		}
	}
	for _, db := range []string{aliveDB, ownDB} {
		if !databaseExists(t, db) {
			t.Errorf("%s of a live run was dropped by the sweep", db)
		}
	}
}

func TestWithDatabase(t *testing.T) {
	tests := []struct {
		name, admin, want string
	}{
		{"url path replaced", "postgres://u:p@127.0.0.1:5432/postgres?sslmode=disable",
			"postgres://u:p@127.0.0.1:5432/halovet_test_x?sslmode=disable"},
		{"url without path", "postgresql://u@db.example:5432", "postgresql://u@db.example:5432/halovet_test_x"},
		{"key=value string", "host=127.0.0.1 user=postgres dbname=postgres", "host=127.0.0.1 user=postgres dbname=postgres dbname=halovet_test_x"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := withDatabase(tt.admin, "halovet_test_x")
			if err != nil || got != tt.want {
				t.Errorf("withDatabase(%q) = %q, %v; want %q", tt.admin, got, err, tt.want)
			}
		})
	}
}

func TestIdentPart(t *testing.T) {
	tests := []struct{ name, in, want string }{
		{"kept", "store_v1", "store_v1"},
		{"lowered and replaced", "Store-V1.x", "store_v1_x"},
		{"cut to length", "abcdefghijklmnopqrstuvwxyz", "abcdefghijklmnopqrst"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := identPart(tt.in, 20); got != tt.want {
				t.Errorf("identPart(%q) = %q; want %q", tt.in, got, tt.want)
			}
		})
	}
}
