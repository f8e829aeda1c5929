package console

import (
	"context"

	"google.golang.org/grpc/metadata"
)

// BearerCallContext makes a console call carry the signed-in identity's secret as
// "authorization: Bearer <secret>", as any other client would: the server then
// authenticates the call and applies its own checks to it.
func BearerCallContext(ctx context.Context, id Identity, _ string) context.Context {
	if id.Secret == "" {
		return ctx
	}
	return metadata.AppendToOutgoingContext(ctx, "authorization", "Bearer "+id.Secret)
}
