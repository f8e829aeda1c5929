package main

import (
	"context"
	"os"
	"path/filepath"
	"testing"

	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/store"
)

// TestMain runs the package's tests with a private PostgreSQL (or TEST_DATABASE_URL)
// and stops it afterwards. Every test file of package main shares it.
func TestMain(m *testing.M) {
	pgtest.Main(m)
	// The binary built for the serve tests lives in a temporary directory of its own.
	if binPath != "" {
		_ = os.RemoveAll(filepath.Dir(binPath))
	}
}

// migrateForTest is the template migration of this package's test databases.
func migrateForTest(ctx context.Context, url string) error {
	_, err := store.Migrate(ctx, url)
	return err
}
