package service

import (
	"context"
	"fmt"
	"net"
	"net/http"

	"google.golang.org/grpc"
	"google.golang.org/grpc/credentials/insecure"
	"google.golang.org/grpc/test/bufconn"
)

// inProcessBuffer is the size of the in-memory pipe of InProcessConn.
const inProcessBuffer = 1 << 20

// InProcessConn returns a client connection to this server through an in-memory pipe: the
// calls run through the same interceptors, limits and handlers as calls from the network,
// without leaving the process (and without the network listener's TLS, which a pipe
// inside the process does not need). The console uses it. Serve's shutdown stops the
// pipe with the network listener; close the connection when done with it.
func (s *Server) InProcessConn() (*grpc.ClientConn, error) {
	lis := bufconn.Listen(inProcessBuffer)
	g := s.inProcessServer()
	go func() { _ = g.Serve(lis) }()
	conn, err := grpc.NewClient("passthrough:///in-process",
		grpc.WithContextDialer(func(ctx context.Context, _ string) (net.Conn, error) { return lis.DialContext(ctx) }),
		grpc.WithTransportCredentials(insecure.NewCredentials()),
		grpc.WithDefaultCallOptions(grpc.MaxCallRecvMsgSize(s.limits.MaxSendMsgBytes), grpc.MaxCallSendMsgSize(s.limits.MaxRecvMsgBytes)))
	if err != nil {
		return nil, fmt.Errorf("in-process connection: %w", err)
	}
	return conn, nil
}

// inProcessServer builds, once, the gRPC server of InProcessConn: the network server's
// interceptors, limits and services, without its extra options.
func (s *Server) inProcessServer() *grpc.Server {
	s.inProcMu.Lock()
	defer s.inProcMu.Unlock()
	if s.inProc == nil {
		s.inProc = s.newGRPC(nil)
	}
	return s.inProc
}

// inProcess is the in-process server, nil when none was asked for.
func (s *Server) inProcess() *grpc.Server {
	s.inProcMu.Lock()
	defer s.inProcMu.Unlock()
	return s.inProc
}

// Mount serves h under the path prefix (ending in "/") on the HTTP listener, beside the
// HTTP/JSON API; call it before ServeHTTPAPI. The console is mounted so.
func (s *Server) Mount(prefix string, h http.Handler) {
	s.mounts = append(s.mounts, mount{prefix: prefix, h: h})
}

type mount struct {
	prefix string
	h      http.Handler
}
