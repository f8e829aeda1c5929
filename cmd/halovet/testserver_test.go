package main

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

// testServer is the halovet server running in this test's process.
type testServer struct {
	addr string           // the loopback address it listens on
	conn *grpc.ClientConn // a plaintext client connection to addr
	st   *store.Store     // the store of its fresh test database
}

// startTestServer runs the real server on a free loopback port against a fresh migrated
// database holding the seed catalogue, and returns it with a client connection. now, when
// not nil, is the server's clock (nil means time.Now). Everything is torn down when the
// test ends; Serve must return nil within 15 s of the shutdown. tune, if given, changes the
// server's options before it starts.
func startTestServer(t *testing.T, now func() time.Time, tune ...func(*service.Options)) *testServer {
	t.Helper()
	url := pgtest.NewDatabase(t, "halovet_cmd", migrateForTest)
	ctx := context.Background()
	st, err := store.Open(ctx, url)
	if err != nil {
		t.Fatalf("open the test database: %v", err)
	}
	t.Cleanup(st.Close)
	log := slog.New(slog.NewTextHandler(io.Discard, nil))
	cat, err := service.LoadCatalogue(ctx, st, log)
	if err != nil {
		t.Fatalf("load the seed catalogue: %v", err)
	}
	opts := service.Options{Logger: log, GracePeriod: 5 * time.Second, Now: now, OpenAccess: true}
	for _, f := range tune {
		f(&opts)
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
	return &testServer{addr: lis.Addr().String(), conn: conn, st: st}
}
