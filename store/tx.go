package store

import (
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"time"

	"github.com/jackc/pgx/v5"
)

// maxTxAttempts bounds the attempts of a transaction that lost a race.
const maxTxAttempts = 5

// txSpec says how one transaction runs. Each call of inTx names its isolation level
// beside it and says why that level is enough.
type txSpec struct {
	iso      pgx.TxIsoLevel
	readOnly bool
	// keyRace retries a unique violation as well: for a transaction that looked a key
	// up and then inserts it, so that a key another transaction stored in between is
	// found by the next attempt.
	keyRace bool
}

// readCommitted, repeatableRead and serializable are the isolation levels the store's
// transactions use.
var (
	readCommitted  = txSpec{iso: pgx.ReadCommitted}
	repeatableRead = txSpec{iso: pgx.RepeatableRead}
	serializable   = txSpec{iso: pgx.Serializable}
)

// inTx runs fn in a transaction of spec and commits it: the store's one retry loop. A
// serialization failure or a deadlock (and, with spec.keyRace, a unique violation) rolls
// back and runs fn again after a growing, jittered pause, up to maxTxAttempts times and
// never after ctx is done; fn must therefore have no side effects outside tx. The error
// returned is classified (see kindOf): a race still lost after the last attempt is
// ErrRetryable, a lost connection ErrUnavailable.
func (s *Store) inTx(ctx context.Context, spec txSpec, fn func(tx pgx.Tx) error) error {
	opts := pgx.TxOptions{IsoLevel: spec.iso}
	if spec.readOnly {
		opts.AccessMode = pgx.ReadOnly
	}
	backoff := 5 * time.Millisecond
	for attempt := 1; ; attempt++ {
		err := classified(pgx.BeginTxFunc(ctx, s.pool, opts, fn))
		again := errors.Is(err, ErrRetryable) || (spec.keyRace && errors.Is(err, ErrAlreadyExists))
		if err == nil || !again || attempt == maxTxAttempts {
			return err
		}
		// Full jitter: transactions that collided do not collide again in step.
		pause := backoff/2 + rand.N(backoff/2+1)
		select {
		case <-ctx.Done():
			return fmt.Errorf("%w (gave up retrying: %v)", err, ctx.Err())
		case <-time.After(pause):
		}
		backoff *= 2
	}
}
