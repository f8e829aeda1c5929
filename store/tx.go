package store

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// maxTxAttempts bounds the retries of a transaction that lost a serialization race
// or a deadlock.
const maxTxAttempts = 5

// InTx runs fn in a transaction and commits it. A serialization failure (40001) or a
// deadlock (40P01) rolls back and runs fn again, with a growing pause, up to
// maxTxAttempts times and never after ctx is done; fn must therefore have no side effects
// outside tx.
func (s *Store) InTx(ctx context.Context, fn func(tx pgx.Tx) error) error {
	backoff := 5 * time.Millisecond
	for attempt := 1; ; attempt++ {
		err := pgx.BeginFunc(ctx, s.pool, fn)
		if err == nil || !retryable(err) || attempt == maxTxAttempts {
			return err
		}
		select {
		case <-ctx.Done():
			return fmt.Errorf("%w (gave up retrying: %v)", err, ctx.Err())
		case <-time.After(backoff):
		}
		backoff *= 2
	}
}

func retryable(err error) bool {
	var pg *pgconn.PgError
	if errors.As(err, &pg) {
		return pg.Code == "40001" || pg.Code == "40P01"
	}
	return false
}
