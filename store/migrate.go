package store

import (
	"context"
	"database/sql"
	"embed"
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
		return 0, fmt.Errorf("migrations: %w", err)
	}
	if _, err := p.Up(ctx); err != nil {
		return 0, fmt.Errorf("applying migrations: %w", err)
	}
	return p.GetDBVersion(ctx)
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
