package console_test

import (
	"context"

	"google.golang.org/grpc"
	"google.golang.org/grpc/metadata"
)

// grpcConn is the harness's connection to the server, for setting up and checking what
// the console changed.
type grpcConn struct {
	*grpc.ClientConn
	officer string // the officer credential's secret
}

// admin is a context carrying the officer's credential.
func (c *grpcConn) admin() context.Context {
	return metadata.AppendToOutgoingContext(context.Background(), "authorization", "Bearer "+c.officer)
}
