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
	url := pgtest.NewDatabase(t, "halovet_service", migrateServiceDB)
	ctx := context.Background()
	st, err := store.Open(ctx, url)
	if err != nil {
		t.Fatalf("open the test database: %v", err)
	}
	t.Cleanup(st.Close) // runs last: after the server has stopped
	log := quietLogger()
	holder, err := service.LoadCatalogue(ctx, st, log)
	if err != nil {
		t.Fatalf("load the seed catalogue into the test database: %v", err)
	}
	srv := service.New(st, holder, service.Options{Logger: log, GracePeriod: 5 * time.Second})
	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatalf("listen on a loopback port: %v", err)
	}
	serveCtx, cancel := context.WithCancel(context.Background())
	served := make(chan error, 1)
	go func() { served <- srv.Serve(serveCtx, lis) }()
	t.Cleanup(func() {
		cancel()
		select {
		case err := <-served:
			if err != nil && !errors.Is(err, net.ErrClosed) {
				t.Errorf("Serve returned %v after shutdown; want nil", err)
			}
		case <-time.After(15 * time.Second):
			t.Errorf("Serve did not return within 15 s of shutdown")
		}
	})
	conn, err = grpc.NewClient(lis.Addr().String(), grpc.WithTransportCredentials(insecure.NewCredentials()))
	if err != nil {
		t.Fatalf("dial the test server: %v", err)
	}
	t.Cleanup(func() { _ = conn.Close() }) // registered last, so it runs first
	return conn, st
}
