package store

import (
	"context"

	"github.com/jackc/pgx/v5"
)

// querier is what the read methods of Reader need: the pool, or a transaction.
type querier interface {
	Query(ctx context.Context, sql string, args ...any) (pgx.Rows, error)
	QueryRow(ctx context.Context, sql string, args ...any) pgx.Row
}

// Reader reads the register: from the pool, each read on its own (the Store's read
// methods), or inside one snapshot transaction (ReadSnapshot).
type Reader struct{ q querier }

func (s *Store) reader() Reader { return Reader{q: s.pool} }

// ReadSnapshot runs fn with a Reader on one read-only snapshot of the register, so that
// every read of one report sees the same committed state (a shipment recorded between two
// reads is in all of them or in none).
func (s *Store) ReadSnapshot(ctx context.Context, fn func(Reader) error) error {
	// REPEATABLE READ READ ONLY: the snapshot is taken at the first statement and holds
	// for the whole transaction; a read-only transaction at this level never fails to
	// serialize, so nothing is retried and no write can slip in.
	return s.inTx(ctx, txSpec{iso: pgx.RepeatableRead, readOnly: true}, func(tx pgx.Tx) error {
		return fn(Reader{q: tx})
	})
}
