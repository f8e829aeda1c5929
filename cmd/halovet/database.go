package main

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"os"
	"path/filepath"
	"time"

	"github.com/spf13/pflag"
	"go.opentelemetry.io/otel/trace"

	"github.com/halovet/halovet/pglocal"
	"github.com/halovet/halovet/store"
)

// dbFlags choose the database: a URL, or a private cluster in a data directory.
type dbFlags struct {
	url     string
	dataDir string
	// ephemeral trades durability for speed in a throw-away cluster (the demo's).
	ephemeral bool
	// statementTimeout is the pool's statement_timeout (store.OpenOptions); 0: the default.
	statementTimeout time.Duration
	// tracerProvider traces the pool's statements (store.OpenOptions); nil: none.
	tracerProvider trace.TracerProvider
}

func defaultDataDir() string {
	if d, err := pglocal.DefaultDataDir(); err == nil {
		return d
	}
	return filepath.Join(os.TempDir(), "halovet", "postgres")
}

func (d *dbFlags) register(fs *pflag.FlagSet) {
	fs.StringVar(&d.url, "database-url", envOr("HALOVET_DATABASE_URL", ""),
		"PostgreSQL URL, e.g. postgres://halovet@db:5432/halovet (env HALOVET_DATABASE_URL);\n"+
			"when empty, halovet runs a private cluster in --data-dir")
	fs.StringVar(&d.dataDir, "data-dir", envOr("HALOVET_DATA_DIR", defaultDataDir()),
		"directory of the private PostgreSQL cluster used when no --database-url is given (env HALOVET_DATA_DIR)")
}

// database is an open store and, for a private cluster, what stops it.
type database struct {
	URL     string
	Store   *store.Store
	cluster *pglocal.Cluster
	private bool
}

// Close closes the pool and stops a private cluster.
func (db *database) Close() {
	if db.Store != nil {
		db.Store.Close()
	}
	if db.cluster != nil {
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
		defer cancel()
		if err := db.cluster.Stop(ctx); err != nil {
			slog.Warn("stopping the private PostgreSQL cluster", "err", err)
		}
	}
}

// openForVerb opens the database for a verb that takes no arguments (migrate, verify),
// logging as HALOVET_LOG_FORMAT and HALOVET_LOG_LEVEL (default warn) say.
func openForVerb(ctx context.Context, d dbFlags, args []string, migrate bool) (*database, error) {
	if len(args) > 0 {
		return nil, usageErr("unexpected argument %q (see --help)", args[0])
	}
	log, err := newLogger(envOr("HALOVET_LOG_FORMAT", "text"), envOr("HALOVET_LOG_LEVEL", "warn"))
	if err != nil {
		return nil, err
	}
	return openDatabase(ctx, d, migrate, log)
}

// openDatabase connects to the URL given, or starts the private cluster, and applies
// migrations when migrate is true (always for a private cluster, which is halovet's own).
func openDatabase(ctx context.Context, d dbFlags, migrate bool, log *slog.Logger) (*database, error) {
	db := &database{URL: d.url}
	if db.URL == "" {
		c, err := pglocal.Start(ctx, pglocal.Options{DataDir: d.dataDir, Log: os.Stderr, Ephemeral: d.ephemeral})
		if err != nil {
			return nil, fmt.Errorf("private PostgreSQL cluster in %s: %w", d.dataDir, err)
		}
		db.cluster, db.private = c, true
		if err := pglocal.EnsureDatabase(ctx, c.URL("postgres"), "halovet"); err != nil {
			db.Close()
			return nil, err
		}
		db.URL = c.URL("halovet")
		migrate = true
		log.Info("private PostgreSQL cluster", "data_dir", c.DataDir(), "url", store.Redact(db.URL))
	}
	if migrate {
		v, err := store.Migrate(ctx, db.URL)
		if err != nil {
			db.Close()
			return nil, databaseErr(fmt.Errorf("database %s: %w", store.Redact(db.URL), err))
		}
		log.Info("schema migrated", "version", v)
	}
	st, err := store.OpenWith(ctx, db.URL, store.OpenOptions{StatementTimeout: d.statementTimeout, TracerProvider: d.tracerProvider})
	if err != nil {
		db.Close()
		return nil, databaseErr(err)
	}
	db.Store = st
	return db, nil
}

func newLogger(format, level string) (*slog.Logger, error) {
	var lv slog.Level
	if err := lv.UnmarshalText([]byte(level)); err != nil {
		return nil, usageErr("--log-level %q: use debug, info, warn or error", level)
	}
	opts := &slog.HandlerOptions{Level: lv}
	switch format {
	case "text", "":
		return slog.New(slog.NewTextHandler(os.Stderr, opts)), nil
	case "json":
		return slog.New(slog.NewJSONHandler(os.Stderr, opts)), nil
	}
	return nil, usageErr("--log-format %q: use text or json", format)
}

// databaseErr gives a database failure its exit code: 3 when the database cannot be
// reached, 4 otherwise.
func databaseErr(err error) error {
	if errors.Is(err, store.ErrUnavailable) {
		return &exitError{code: exitUnreachable, err: err}
	}
	return &exitError{code: exitFailure, err: err}
}
