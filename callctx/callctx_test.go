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
	if got := Actor(ctx); got != "anonymous (request r1)" {
		t.Fatalf("anonymous: Actor = %q", got)
	}
	ctx = With(ctx, &Call{RequestID: "r2", Caller: Caller{Subject: "officer.kim"}})
	if got := Actor(ctx); got != "officer.kim (request r2)" {
		t.Fatalf("named: Actor = %q", got)
	}
	if Logger(ctx) == nil {
		t.Fatal("Logger must never be nil")
	}
}
