package callctx

import (
	"context"
	"testing"
)

func TestActor(t *testing.T) {
	ctx := context.Background()
	if got := Actor(ctx); got != "local" {
		t.Fatalf("no call: Actor = %q, want local", got)
	}
	ctx = With(ctx, &Call{RequestID: "r1"})
	if got := Actor(ctx); got != "anonymous" {
		t.Fatalf("anonymous: Actor = %q", got)
	}
	// The request id is not part of the actor: a caller chooses its request id, so it
	// must never make up any part of who the trail says acted.
	ctx = With(ctx, &Call{RequestID: "minister-of-environment", Caller: Caller{Subject: "officer.kim", CredentialID: "00aa11bb22cc33dd"}})
	if got := Actor(ctx); got != "officer.kim" {
		t.Fatalf("named: Actor = %q", got)
	}
	if got := CredentialID(ctx); got != "00aa11bb22cc33dd" {
		t.Fatalf("CredentialID = %q", got)
	}
	if got := RequestID(ctx); got != "minister-of-environment" {
		t.Fatalf("RequestID = %q", got)
	}
	if Logger(ctx) == nil {
		t.Fatal("Logger must never be nil")
	}
}
