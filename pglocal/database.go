package pglocal

import (
	"context"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// ErrInvalidDatabaseName reports a database name PostgreSQL cannot hold.
var ErrInvalidDatabaseName = errors.New("pglocal: invalid database name")

// maxIdentifierBytes is PostgreSQL's identifier limit (NAMEDATALEN - 1).
const maxIdentifierBytes = 63

// EnsureDatabase creates the database name on the server at adminURL (a URL or key=value
// connection string for a role allowed to create databases) unless it exists. Concurrent
// callers creating the same database all succeed.
func EnsureDatabase(ctx context.Context, adminURL, name string) error {
	if name == "" || len(name) > maxIdentifierBytes {
		return fmt.Errorf("%w: %q has %d bytes; accepted are 1 to %d bytes", ErrInvalidDatabaseName, name, len(name), maxIdentifierBytes)
	}
	conn, err := pgx.Connect(ctx, adminURL)
	if err != nil {
		return fmt.Errorf("pglocal: connect to create database %q: %w", name, err)
	}
	defer conn.Close(context.WithoutCancel(ctx))
	var exists bool
	if err := conn.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM pg_database WHERE datname = $1)", name).Scan(&exists); err != nil {
		return fmt.Errorf("pglocal: look up database %q: %w", name, err)
	}
	if exists {
		return nil
	}
	if _, err := conn.Exec(ctx, "CREATE DATABASE "+pgx.Identifier{name}.Sanitize()); err != nil && !isDuplicateDatabase(err) {
		return fmt.Errorf("pglocal: create database %q: %w", name, err)
	}
	return nil
}

// isDuplicateDatabase reports whether err says the database exists already: 42P04
// duplicate_database, or 23505 unique_violation on pg_database when another session
// created it concurrently.
func isDuplicateDatabase(err error) bool {
	var pgErr *pgconn.PgError
	return errors.As(err, &pgErr) && (pgErr.Code == "42P04" || pgErr.Code == "23505")
}
