package main

import (
	"testing"
	"time"

	"google.golang.org/grpc"

	"github.com/halovet/halovet/internal/servertest"
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
	opts := service.Options{Now: now, OpenAccess: true}
	for _, f := range tune {
		f(&opts)
	}
	ts := servertest.Start(t, "halovet_cmd", opts)
	return &testServer{addr: ts.Addr, conn: ts.Conn, st: ts.Store}
}
