package store

import (
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5/pgconn"
)

// Domain errors the service maps to gRPC codes.
var (
	// ErrNotFound: the named row does not exist.
	ErrNotFound = errors.New("not found")
	// ErrAlreadyExists: a row with that key exists already.
	ErrAlreadyExists = errors.New("already exists")
	// ErrConflict: the change contradicts the stored state (e.g. a quota below what is drawn).
	ErrConflict = errors.New("conflict")
)

// notFound wraps ErrNotFound with what was looked for.
func notFound(what, key string) error { return fmt.Errorf("%s %q: %w", what, key, ErrNotFound) }

// classify maps PostgreSQL errors by SQLSTATE (never by message text) to domain errors.
func classify(err error, what, key string) error {
	var pg *pgconn.PgError
	if errors.As(err, &pg) {
		switch pg.Code {
		case "23505":
			return fmt.Errorf("%s %q: %w", what, key, ErrAlreadyExists)
		case "23503":
			return fmt.Errorf("%s %q refers to something that does not exist (%s): %w", what, key, pg.ConstraintName, ErrNotFound)
		case "23514":
			return fmt.Errorf("%s %q breaks rule %s: %w", what, key, pg.ConstraintName, ErrConflict)
		}
	}
	return err
}
