// Package servertest runs the real halovet server inside a test, for the tests of the
// command line, the console and the shared client packages: a fresh migrated PostgreSQL
// database (package pgtest) holding the seed catalogue, the server on a free loopback
// port, and a plaintext client connection to it, all torn down when the test ends.
package servertest

import (
	"context"
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

// Server is a halovet server running in the test's process.
type Server struct {
	Server *service.Server
	Store  *store.Store     // the store of its fresh test database
	Addr   string           // the loopback address it listens on
	Conn   *grpc.ClientConn // a plaintext client connection to Addr
}

// Migrate is the template migration of the test databases (pgtest.NewDatabase).
func Migrate(ctx context.Context, url string) error {
	_, err := store.Migrate(ctx, url)
	return err
}

// Start runs the server with opts on a database copied from the template templateName
// (one per test binary and name). A nil opts.Logger discards the log; a zero
// opts.GracePeriod is 5 s. Serve must return nil within 15 s of the shutdown.
func Start(t testing.TB, templateName string, opts service.Options) *Server {
	t.Helper()
	ctx := context.Background()
	url := pgtest.NewDatabase(t, templateName, Migrate)
	st, err := store.Open(ctx, url)
	if err != nil {
		t.Fatalf("open the test database: %v", err)
	}
	t.Cleanup(st.Close)
	if opts.Logger == nil {
		opts.Logger = slog.New(slog.NewTextHandler(io.Discard, nil))
	}
	if opts.GracePeriod == 0 {
		opts.GracePeriod = 5 * time.Second
	}
	cat, err := service.LoadCatalogue(ctx, st, opts.Logger)
	if err != nil {
		t.Fatalf("load the seed catalogue: %v", err)
	}
	srv := service.New(st, cat, opts)
	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatalf("listen on loopback: %v", err)
	}
	serveCtx, cancel := context.WithCancel(context.Background())
	served := make(chan error, 1)
	go func() { served <- srv.Serve(serveCtx, lis) }()
	t.Cleanup(func() {
		cancel()
		select {
		case err := <-served:
			if err != nil {
				t.Errorf("Serve returned %v after shutdown; want nil", err)
			}
		case <-time.After(15 * time.Second):
			t.Errorf("Serve did not return within 15 s of shutdown")
		}
	})
	conn, err := grpc.NewClient(lis.Addr().String(), grpc.WithTransportCredentials(insecure.NewCredentials()))
	if err != nil {
		t.Fatalf("dial the test server: %v", err)
	}
	t.Cleanup(func() { _ = conn.Close() })
	return &Server{Server: srv, Store: st, Addr: lis.Addr().String(), Conn: conn}
}
