package store

import (
	"context"
	"errors"
	"fmt"
	"io"
	"net"
	"strings"
	"syscall"

	"github.com/jackc/pgx/v5/pgconn"
)

// The kinds of error the store returns. Every error a Store method returns is either nil,
// one of these (errors.Is finds it, however it is wrapped), a context error of the
// caller's ctx, or an error the store cannot classify (a bug or a broken database: the
// service answers it as internal). SQLSTATE codes are read here and nowhere else in the
// module.
var (
	// ErrNotFound: the named row does not exist.
	ErrNotFound = errors.New("not found")
	// ErrAlreadyExists: a row with that key exists already.
	ErrAlreadyExists = errors.New("already exists")
	// ErrConflict: the change contradicts the stored state (e.g. a quota below what is drawn).
	ErrConflict = errors.New("conflict")
	// ErrRetryable: the transaction lost a race with another one (serialization failure,
	// deadlock) and was retried as often as the store retries; the same call may succeed
	// when it is made again.
	ErrRetryable = errors.New("the transaction lost a race with another; retry")
	// ErrUnavailable: the database cannot be reached or went away during the call
	// (connection refused or lost, server shutting down, too many connections). Nothing
	// is known to have been committed by the statement that failed; retry with backoff.
	ErrUnavailable = errors.New("the database is not available")
	// ErrTimeout: the database cancelled a statement that ran longer than its
	// statement_timeout (SQLSTATE 57014 without a cancellation from this process).
	ErrTimeout = errors.New("the database statement ran past its time limit")
)

// dbError is a database error given its kind. Error is the database's own text (it may
// carry SQL details: the service logs it and does not send it); errors.Is finds both the
// kind and the cause.
type dbError struct {
	kind error
	err  error
}

func (e *dbError) Error() string   { return e.kind.Error() + ": " + e.err.Error() }
func (e *dbError) Unwrap() []error { return []error{e.kind, e.err} }

// notFound wraps ErrNotFound with what was looked for.
func notFound(what, key string) error { return fmt.Errorf("%s %q: %w", what, key, ErrNotFound) }

// classify maps a constraint violation of a write of what (key) to a domain error with a
// message that names them; other errors are left to classified.
func classify(err error, what, key string) error {
	var pg *pgconn.PgError
	if errors.As(err, &pg) {
		switch pg.Code {
		case "23505": // unique_violation
			return fmt.Errorf("%s %q: %w", what, key, ErrAlreadyExists)
		case "23503": // foreign_key_violation
			return fmt.Errorf("%s %q refers to something that does not exist (%s): %w", what, key, pg.ConstraintName, ErrNotFound)
		case "23514": // check_violation
			return fmt.Errorf("%s %q breaks rule %s: %w", what, key, pg.ConstraintName, ErrConflict)
		}
	}
	return err
}

// kindOf returns the kind of a database error (one of the Err values), or nil when err
// is of none of them. It reads SQLSTATE codes, never message texts.
func kindOf(err error) error {
	for _, k := range []error{ErrNotFound, ErrAlreadyExists, ErrConflict, ErrRetryable, ErrUnavailable, ErrTimeout} {
		if errors.Is(err, k) {
			return k
		}
	}
	// A failed connection attempt, whatever the server said (refused, shutting down, no
	// such database, authentication): the database cannot be reached with this URL now.
	var ce *pgconn.ConnectError
	if errors.As(err, &ce) {
		return ErrUnavailable
	}
	var pg *pgconn.PgError
	if errors.As(err, &pg) {
		switch {
		case pg.Code == "23505": // unique_violation
			return ErrAlreadyExists
		case pg.Code == "23503" || pg.Code == "02000": // foreign_key_violation, no_data
			return ErrNotFound
		case pg.Code == "23514" || pg.Code == "23P01": // check_violation, exclusion_violation
			return ErrConflict
		case pg.Code == "40001" || pg.Code == "40P01": // serialization_failure, deadlock_detected
			return ErrRetryable
		case pg.Code == "57014": // query_canceled: statement_timeout (a context cancel is caught above)
			return ErrTimeout
		case strings.HasPrefix(pg.Code, "08"), // connection exceptions
			pg.Code == "57P01",                           // admin_shutdown (pg_terminate_backend, fast shutdown)
			pg.Code == "57P02",                           // crash_shutdown
			pg.Code == "57P03",                           // cannot_connect_now (starting up, shutting down)
			pg.Code == "57P05",                           // idle_session_timeout
			pg.Code == "53300",                           // too_many_connections
			pg.Code == "55000" && pg.Severity == "FATAL": // database not accepting connections
			return ErrUnavailable
		}
		return nil
	}
	var ne net.Error
	switch {
	case errors.As(err, &ne),
		errors.Is(err, io.EOF), errors.Is(err, io.ErrUnexpectedEOF),
		errors.Is(err, net.ErrClosed),
		errors.Is(err, syscall.ECONNRESET), errors.Is(err, syscall.ECONNREFUSED),
		errors.Is(err, syscall.EPIPE),
		errors.Is(err, pgconn.ErrConnClosed),
		pgconn.SafeToRetry(err):
		return ErrUnavailable
	}
	return nil
}

// classified gives err its kind (see kindOf). Context errors of the caller pass as they
// are: the caller's deadline or cancellation, not the database, ended the call.
func classified(err error) error {
	if err == nil || errors.Is(err, context.Canceled) || errors.Is(err, context.DeadlineExceeded) {
		return err
	}
	var de *dbError
	if errors.As(err, &de) {
		return err
	}
	k := kindOf(err)
	if k == nil || errors.Is(err, k) {
		return err
	}
	return &dbError{kind: k, err: err}
}

// classifyInto is classified for a deferred call on a named result.
func classifyInto(err *error) { *err = classified(*err) }
