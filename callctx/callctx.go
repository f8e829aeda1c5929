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
	// Via says how the identity was established (for the audit trail): "credential",
	// "certificate", "open" (a server run with open access).
	Via string
	// CredentialID is the id of the halovet credential presented, or the certificate's
	// mapping entry; empty when there is none.
	CredentialID string
}

// Call is what the transport knows about one call.
type Call struct {
	RequestID string
	Method    string
	Caller    Caller
	Logger    *slog.Logger
	// AuthErr is the transport's refusal of a credential the caller presented (the call
	// is then refused before any handler runs); nil when none was refused.
	AuthErr error
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

// Actor is the audit trail's name for whoever is behind ctx: the identity's name as
// established by the server (never anything the caller sends), "anonymous" for a call
// without one, and "local" without a call in ctx (an operator working on the database
// directly, e.g. `halovet credentials issue --database-url`).
func Actor(ctx context.Context) string {
	c := From(ctx)
	if c == nil {
		return "local"
	}
	if c.Caller.Subject == "" {
		return "anonymous"
	}
	return c.Caller.Subject
}

// CredentialID is the credential id behind ctx, "" when there is none.
func CredentialID(ctx context.Context) string {
	if c := From(ctx); c != nil {
		return c.Caller.CredentialID
	}
	return ""
}

// RequestID is the call's request id, "" without a call.
func RequestID(ctx context.Context) string {
	if c := From(ctx); c != nil {
		return c.RequestID
	}
	return ""
}

// Logger returns the call's logger, or slog.Default() when there is none.
func Logger(ctx context.Context) *slog.Logger {
	if c := From(ctx); c != nil && c.Logger != nil {
		return c.Logger
	}
	return slog.Default()
}
