// Package callctx carries what a call is, once, from the edge of the server to every layer
// below it: the request id the caller gets back, the identity that made the call, and a
// logger that already names both. The transport sets it; workflow and store code read it
// (the audit trail's actor comes from here) without importing gRPC.
package callctx

import (
	"context"
	"log/slog"
)

// Caller is the identity behind a call. The zero value is an anonymous caller.
type Caller struct {
	// Subject names the person or system: a credential's name, a certificate subject or
	// an OIDC subject. Empty for an anonymous call.
	Subject string
	// Roles granted to the subject for this call.
	Roles []string
	// Company limits a trader's calls to one company's records; empty for roles that are
	// not company-scoped.
	Company string
	// Via says how the identity was established (for the audit trail), e.g. "token",
	// "mtls", "oidc", "local".
	Via string
}

// Call is what the transport knows about one call.
type Call struct {
	RequestID string
	Method    string
	Caller    Caller
	Logger    *slog.Logger
}

type key struct{}

// With returns ctx carrying c.
func With(ctx context.Context, c *Call) context.Context { return context.WithValue(ctx, key{}, c) }

// From returns the call in ctx, or nil when there is none (a call from inside the process,
// a test or a CLI verb working on the database directly).
func From(ctx context.Context) *Call {
	c, _ := ctx.Value(key{}).(*Call)
	return c
}

// Actor is the audit trail's name for whoever is behind ctx: the subject when known,
// followed by the request id, so that a logged call and its audit rows can be matched.
// Without a call in ctx it is "local" (an operator working on the database directly).
func Actor(ctx context.Context) string {
	c := From(ctx)
	if c == nil {
		return "local"
	}
	who := c.Caller.Subject
	if who == "" {
		who = "anonymous"
	}
	if c.RequestID == "" {
		return who
	}
	return who + " (request " + c.RequestID + ")"
}

// Logger returns the call's logger, or slog.Default() when there is none.
func Logger(ctx context.Context) *slog.Logger {
	if c := From(ctx); c != nil && c.Logger != nil {
		return c.Logger
	}
	return slog.Default()
}
