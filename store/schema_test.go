package store_test

import (
	"context"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/store"
)

// TestSchemaStateAcrossVersions: what an old binary (this one) decides on a database that a
// newer binary migrated, and that migrating again with this binary leaves the newer schema
// as it is.
func TestSchemaStateAcrossVersions(t *testing.T) {
	t.Parallel()
	url := pgtest.NewDatabase(t, "store_schema", func(ctx context.Context, url string) error {
		_, err := store.Migrate(ctx, url)
		return err
	})
	ctx := context.Background()
	st, err := store.Open(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	state, err := st.SchemaState(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if ok, why := state.Serves(); !ok || state.Current != state.Head {
		t.Fatalf("freshly migrated: %+v serves=%v (%s); want current = head and serving", state, ok, why)
	}
	head := state.Head

	db, err := pgx.Connect(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close(ctx)
	if _, err := db.Exec(ctx, `INSERT INTO goose_db_version (version_id, is_applied) VALUES ($1, true)`, head+1); err != nil {
		t.Fatal(err)
	}
	if v, err := store.Migrate(ctx, url); err != nil || v != head+1 {
		t.Errorf("Migrate by the older binary on a newer schema: version %d, %v; want %d and no error", v, err, head+1)
	}
	tests := []struct {
		name   string
		rows   string // schema_compatibility rows inserted before the check
		serves bool
		reason string
	}{
		{"newer, no restriction", "", true, ""},
		{"newer, allows this binary", "(newer, head, 'adds a column old servers ignore')", true, ""},
		{"newer, needs newer servers", "(newer, newer, 'the licences table was split')", false, "the licences table was split"},
		// A row of a migration not applied (beyond the current version) does not count.
		{"unapplied restriction", "(newer + 1, newer + 1, 'not yet applied')", true, ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := db.Exec(ctx, `DELETE FROM schema_compatibility`); err != nil {
				t.Fatal(err)
			}
			if tt.rows != "" {
				if _, err := db.Exec(ctx, `WITH v(head, newer) AS (SELECT $1::bigint, $2::bigint) INSERT INTO schema_compatibility SELECT r.* FROM v, LATERAL (VALUES `+tt.rows+`) r`, head, head+1); err != nil {
					t.Fatal(err)
				}
			}
			state, err := st.SchemaState(ctx)
			if err != nil {
				t.Fatal(err)
			}
			ok, why := state.Serves()
			if ok != tt.serves || !strings.Contains(why, tt.reason) {
				t.Errorf("Serves() = %v, %q; want %v and a reason containing %q", ok, why, tt.serves, tt.reason)
			}
		})
	}
	// Behind: the binary's newest migration is not applied.
	if _, err := db.Exec(ctx, `DELETE FROM goose_db_version WHERE version_id >= $1`, head); err != nil {
		t.Fatal(err)
	}
	state, err = st.SchemaState(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if ok, why := state.Serves(); ok || !strings.Contains(why, "halovet migrate") {
		t.Errorf("database behind the binary: Serves() = %v, %q; want false, telling to migrate", ok, why)
	}
}
