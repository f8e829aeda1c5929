package pglocal

import (
	"context"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"
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
	exists := func() (bool, error) {
		var ok bool
		err := conn.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM pg_database WHERE datname = $1)", name).Scan(&ok)
		return ok, err
	}
	if ok, err := exists(); err != nil {
		return fmt.Errorf("pglocal: look up database %q: %w", name, err)
	} else if ok {
		return nil
	}
	if _, err := conn.Exec(ctx, "CREATE DATABASE "+pgx.Identifier{name}.Sanitize()); err != nil {
		// Another session may have created it meanwhile (CREATE DATABASE then fails on the
		// unique name once that session commits): what counts is that it exists now. The
		// error is not told apart by its code here; the store is the one place that reads
		// SQLSTATE codes.
		if ok, lerr := exists(); lerr == nil && ok {
			return nil
		}
		return fmt.Errorf("pglocal: create database %q: %w", name, err)
	}
	return nil
}
