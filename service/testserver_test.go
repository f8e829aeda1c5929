package service_test

import (
	"context"
	"errors"
	"io"
	"log/slog"
	"net"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/credentials/insecure"
	"google.golang.org/grpc/metadata"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

// TestMain lets pgtest drop this binary's databases and stop its private cluster after
// the tests.
func TestMain(m *testing.M) { pgtest.Main(m) }

// migrateServiceDB migrates the service tests' template database once per test binary.
func migrateServiceDB(ctx context.Context, url string) error {
	_, err := store.Migrate(ctx, url)
	return err
}

// quietLogger drops log records; the tests assert outcomes, not log lines.
func quietLogger() *slog.Logger {
	return slog.New(slog.NewTextHandler(io.Discard, &slog.HandlerOptions{Level: slog.LevelError + 1}))
}

// startTestServer runs the real halovet server on a free loopback port against a fresh,
// migrated PostgreSQL database holding the seed catalogue, and returns a client
// connection to it and the server's store. Everything is torn down when the test ends:
// the connection is closed, the server shut down (and waited for), the store closed and
// the database dropped.
func startTestServer(t *testing.T) (conn *grpc.ClientConn, st *store.Store) {
	t.Helper()
	conn, st, _ = startServerWith(t, service.Options{})
	return conn, st
}

// startServerWith is startTestServer with the server's options (a Logger left nil is
// quietLogger, a GracePeriod left 0 is 5 s) and the catalogue holder as well, for tests
// and benchmarks that need other options or the catalogue itself.
func startServerWith(tb testing.TB, opts service.Options) (*grpc.ClientConn, *store.Store, *service.CatalogueHolder) {
	tb.Helper()
	return startServerOn(tb, pgtest.NewDatabase(tb, "halovet_service", migrateServiceDB), opts)
}

// startServerOn is startServerWith on a database the test prepared (migrated already).
func startServerOn(tb testing.TB, url string, opts service.Options) (*grpc.ClientConn, *store.Store, *service.CatalogueHolder) {
	tb.Helper()
	_, conn, st, holder := runTestServer(tb, url, opts)
	return conn, st, holder
}

// runTestServer is startServerOn that also returns the server itself. It runs with open
// access (service.Options.OpenAccess: every call acts as the officer "open-access"), so
// that tests about other things need no credential; runSecuredServer runs with
// authentication.
func runTestServer(tb testing.TB, url string, opts service.Options) (*service.Server, *grpc.ClientConn, *store.Store, *service.CatalogueHolder) {
	tb.Helper()
	opts.OpenAccess = true
	return runServer(tb, url, opts)
}

// runSecuredServer is runTestServer with authentication on (opts.OpenAccess as given,
// normally false): calls need a credential (see issueTestCredential).
func runSecuredServer(tb testing.TB, url string, opts service.Options) (*service.Server, *grpc.ClientConn, *store.Store, *service.CatalogueHolder) {
	tb.Helper()
	return runServer(tb, url, opts)
}

// issueTestCredential issues a credential straight in the store (as `halovet credentials
// issue --database-url` does) and returns its secret.
func issueTestCredential(tb testing.TB, st *store.Store, name string, role access.Role, company string) string {
	tb.Helper()
	_, secret, err := st.IssueCredential(context.Background(), store.NewCredential{Name: name, Role: role, CompanyID: company})
	if err != nil {
		tb.Fatalf("issue the test credential %s: %v", name, err)
	}
	return secret
}

// withSecret is ctx carrying a credential secret as a bearer token.
func withSecret(ctx context.Context, secret string) context.Context {
	return metadata.AppendToOutgoingContext(ctx, "authorization", "Bearer "+secret)
}

func runServer(tb testing.TB, url string, opts service.Options) (*service.Server, *grpc.ClientConn, *store.Store, *service.CatalogueHolder) {
	tb.Helper()
	ctx := context.Background()
	st, err := store.Open(ctx, url)
	if err != nil {
		tb.Fatalf("open the test database: %v", err)
	}
	tb.Cleanup(st.Close) // runs last: after the server has stopped
	if opts.Logger == nil {
		opts.Logger = quietLogger()
	}
	if opts.GracePeriod == 0 {
		opts.GracePeriod = 5 * time.Second
	}
	holder, err := service.LoadCatalogue(ctx, st, opts.Logger)
	if err != nil {
		tb.Fatalf("load the seed catalogue into the test database: %v", err)
	}
	srv := service.New(st, holder, opts)
	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		tb.Fatalf("listen on a loopback port: %v", err)
	}
	serveCtx, cancel := context.WithCancel(context.Background())
	served := make(chan error, 1)
	go func() { served <- srv.Serve(serveCtx, lis) }()
	tb.Cleanup(func() {
		cancel()
		select {
		case err := <-served:
			if err != nil && !errors.Is(err, net.ErrClosed) {
				tb.Errorf("Serve returned %v after shutdown; want nil", err)
			}
		case <-time.After(15 * time.Second):
			tb.Errorf("Serve did not return within 15 s of shutdown")
		}
	})
	// Every licensing, shipment and consumption answer of the tests is scanned for
	// binary-float noise.
	conn, err := grpc.NewClient(lis.Addr().String(), append(noiseScan(tb), grpc.WithTransportCredentials(insecure.NewCredentials()))...)
	if err != nil {
		tb.Fatalf("dial the test server: %v", err)
	}
	tb.Cleanup(func() { _ = conn.Close() }) // registered last, so it runs first
	return srv, conn, st, holder
}
