package main

import (
	"net"
	"strings"
	"testing"

	"google.golang.org/grpc"
)

// TestClientTimeoutFrozenServer: against a server that accepts every call and never
// answers, a unary verb and a file check both give up after --timeout and exit as
// "unreachable", naming the flag.
func TestClientTimeoutFrozenServer(t *testing.T) {
	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	frozen := grpc.NewServer(grpc.UnknownServiceHandler(func(_ any, ss grpc.ServerStream) error {
		<-ss.Context().Done()
		return ss.Context().Err()
	}))
	go func() { _ = frozen.Serve(lis) }()
	defer frozen.Stop()
	addr := lis.Addr().String()
	for _, args := range [][]string{
		{"lookup", "R-22"},
		{"check", demoBatch},
		{"check", "--record", demoBatch},
	} {
		code, stdout, stderr := runCaptured(t, append(args, "--server", addr, "--timeout", "300ms")...)
		if code != exitUnreachable || !strings.Contains(stderr, "--timeout") {
			t.Errorf("halovet %s against a frozen server: exit %d; want %d naming --timeout\nstdout:\n%s\nstderr:\n%s",
				strings.Join(args, " "), code, exitUnreachable, stdout, stderr)
		}
	}
}
