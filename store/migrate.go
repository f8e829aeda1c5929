package store

import (
	"context"
	"database/sql"
	"embed"
	"errors"
	"fmt"
	"io/fs"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/stdlib"
	"github.com/pressly/goose/v3"
	"github.com/pressly/goose/v3/lock"
)

//go:embed migrations/*.sql
var migrationFiles embed.FS

// migrationLockID is the advisory lock key goose holds while migrating, so that several
// replicas started at once apply each migration exactly once.
const migrationLockID = 0x68616c6f76 // "halov"

func provider(db *sql.DB) (*goose.Provider, error) {
	sub, err := fs.Sub(migrationFiles, "migrations")
	if err != nil {
		return nil, err
	}
	locker, err := lock.NewPostgresSessionLocker(lock.WithLockID(migrationLockID))
	if err != nil {
		return nil, err
	}
	return goose.NewProvider(goose.DialectPostgres, db, sub,
		goose.WithSessionLocker(locker), goose.WithDisableGlobalRegistry(true))
}

func openSQL(url string) (*sql.DB, error) {
	cfg, err := pgx.ParseConfig(url)
	if err != nil {
		return nil, errBadURL
	}
	return stdlib.OpenDB(*cfg), nil
}

// Migrate applies every pending migration and returns the schema version reached.
func Migrate(ctx context.Context, url string) (int64, error) {
	db, err := openSQL(url)
	if err != nil {
		return 0, err
	}
	defer db.Close()
	p, err := provider(db)
	if err != nil {
		return 0, fmt.Errorf("migrations: %w", classified(err))
	}
	if _, err := p.Up(ctx); err != nil {
		return 0, fmt.Errorf("applying migrations: %w", classified(err))
	}
	v, err := p.GetDBVersion(ctx)
	return v, classified(err)
}

// headVersion is the newest embedded migration's version.
func headVersion() (int64, error) {
	entries, err := fs.ReadDir(migrationFiles, "migrations")
	if err != nil {
		return 0, err
	}
	var head int64
	for _, e := range entries {
		var v int64
		if _, err := fmt.Sscanf(e.Name(), "%d_", &v); err == nil && v > head {
			head = v
		}
	}
	return head, nil
}

// SchemaVersion reads the applied schema version through the pool (cheap enough for a
// health probe) and returns it with the newest embedded version. A database that was
// never migrated reports version 0.
func (s *Store) SchemaVersion(ctx context.Context) (current, head int64, err error) {
	defer classifyInto(&err)
	head, err = headVersion()
	if err != nil {
		return 0, 0, err
	}
	var exists bool
	if err := s.pool.QueryRow(ctx, `SELECT to_regclass('goose_db_version') IS NOT NULL`).Scan(&exists); err != nil {
		return 0, head, err
	}
	if !exists {
		return 0, head, nil
	}
	err = s.pool.QueryRow(ctx,
		`SELECT coalesce(max(version_id), 0) FROM goose_db_version WHERE is_applied`).Scan(&current)
	return current, head, err
}

// SchemaState is what a server needs to know about the database's schema to decide whether
// it can serve on it.
type SchemaState struct {
	// Current is the newest applied migration; Head is this binary's newest embedded one.
	Current, Head int64
	// OldestServer is the oldest server schema (a Head) that the applied migrations still
	// work with, 0 when no applied migration restricts it; Reason says why, and Version
	// names the migration that set it.
	OldestServer, Version int64
	Reason                string
}

// Serves reports whether a server built at Head can serve on this schema, and if not, why.
// A database behind the binary cannot be served (the binary's queries need the newer
// schema); one ahead of it can, unless an applied migration marked this binary's schema as
// too old in schema_compatibility.
func (st SchemaState) Serves() (bool, string) {
	switch {
	case st.Current < st.Head:
		return false, fmt.Sprintf("the database schema is at version %d, behind this server's %d: run 'halovet migrate' (or serve with --migrate)", st.Current, st.Head)
	case st.OldestServer > st.Head:
		return false, fmt.Sprintf("migration %d needs servers built at schema %d or later (%s); this server is at %d: upgrade it", st.Version, st.OldestServer, st.Reason, st.Head)
	}
	return true, ""
}

// SchemaState reads the applied schema version and the compatibility rows of the applied
// migrations.
func (s *Store) SchemaState(ctx context.Context) (_ SchemaState, err error) {
	defer classifyInto(&err)
	cur, head, err := s.SchemaVersion(ctx)
	st := SchemaState{Current: cur, Head: head}
	if err != nil {
		return st, err
	}
	var exists bool
	if err := s.pool.QueryRow(ctx, `SELECT to_regclass('schema_compatibility') IS NOT NULL`).Scan(&exists); err != nil || !exists {
		return st, err
	}
	err = s.pool.QueryRow(ctx, `
		SELECT version, oldest_server_schema, reason FROM schema_compatibility
		WHERE version <= $1 ORDER BY oldest_server_schema DESC, version DESC LIMIT 1`, cur).
		Scan(&st.Version, &st.OldestServer, &st.Reason)
	if errors.Is(err, pgx.ErrNoRows) {
		err = nil
	}
	return st, err
}
