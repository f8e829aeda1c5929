// Package pgtest hands each test a fresh PostgreSQL database cloned from a template that is
// migrated once per test binary, on the server named by TEST_DATABASE_URL or else on one
// private ephemeral cluster started with pglocal.
//
// Use it from a package's tests like this:
//
//	func TestMain(m *testing.M) { pgtest.Main(m) }
//
//	func TestSomething(t *testing.T) {
//		url := pgtest.NewDatabase(t, "store", store.Migrate)
//		...
//	}
//
// TEST_DATABASE_URL, when set, is a URL (or key=value string) for a role that may create
// and drop databases, on PostgreSQL 13 or later (DROP DATABASE ... WITH (FORCE)); its
// database is used for administration only. Every database pgtest
// makes is named halovet_test_<run>_<n> or halovet_tpl_<run>_<k>_<name>, where <run> is
// random per test binary. Each test binary holds a session advisory lock keyed by its <run>
// for its whole life, so when several test binaries share one server, each one drops the
// databases that killed earlier runs left behind (their lock is free) and leaves those of
// live runs alone. All binaries sharing a server must use the same TEST_DATABASE_URL
// database for this, since advisory locks are per database.
//
// A private cluster lives in a temporary directory that Main removes after the tests; if
// the test binary is killed, pglocal's watchdog still stops the server, but the directory
// stays behind in os.TempDir() as halovet-pgtest-*.
package pgtest
