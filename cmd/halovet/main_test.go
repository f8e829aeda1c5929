package main

import (
	"context"
	"testing"

	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/store"
)

// TestMain runs the package's tests with a private PostgreSQL (or TEST_DATABASE_URL)
// and stops it afterwards. Every test file of package main shares it.
func TestMain(m *testing.M) { pgtest.Main(m) }

// migrateForTest is the template migration of this package's test databases.
func migrateForTest(ctx context.Context, url string) error {
	_, err := store.Migrate(ctx, url)
	return err
}
