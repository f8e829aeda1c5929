package store_test

import (
	"context"
	"errors"
	"testing"
	"time"

	"github.com/jackc/pgx/v5/pgconn"

	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/store"
)

// TestStatementTimeout: a statement running past the pool's statement_timeout is cancelled
// by PostgreSQL (SQLSTATE 57014, query_canceled); a short one is not.
func TestStatementTimeout(t *testing.T) {
	url := pgtest.NewDatabase(t, "halovet_store", migrate)
	ctx := context.Background()
	st, err := store.OpenWith(ctx, url, store.OpenOptions{StatementTimeout: 200 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	var shown string
	if err := st.Pool().QueryRow(ctx, `SHOW statement_timeout`).Scan(&shown); err != nil {
		t.Fatal(err)
	}
	if shown != "200ms" {
		t.Fatalf("statement_timeout = %q, want 200ms", shown)
	}
	if _, err := st.Pool().Exec(ctx, `SELECT pg_sleep(0.01)`); err != nil {
		t.Fatalf("a short statement failed: %v", err)
	}
	_, err = st.Pool().Exec(ctx, `SELECT pg_sleep(30)`)
	var pgErr *pgconn.PgError
	if !errors.As(err, &pgErr) || pgErr.Code != "57014" {
		t.Fatalf("pg_sleep(30) gave %v, want SQLSTATE 57014 (statement timeout)", err)
	}

	def, err := store.Open(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	defer def.Close()
	if err := def.Pool().QueryRow(ctx, `SHOW statement_timeout`).Scan(&shown); err != nil {
		t.Fatal(err)
	}
	if shown != "30s" {
		t.Fatalf("default statement_timeout = %q, want 30s", shown)
	}
}
