package service_test

import (
	"context"
	"testing"
	"time"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// A database lost in the middle of a recording stream answers Unavailable, the code a
// client's retry policy retries, not Internal (the register is the invented one of
// shipRegistry; TestFaultScenarios runs the retry after a restart).
func TestDatabaseLostMidStreamAnswersUnavailable(t *testing.T) {
	r := newFaultRig(t)
	conn, _ := serveUntil(t, r.st)
	ctx, cancel := context.WithTimeout(context.Background(), time.Minute)
	defer cancel()
	stream, err := halovetv1.NewShipmentServiceClient(conn).RecordShipments(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: shipRecord("DB-LOST-1")}); err != nil {
		t.Fatal(err)
	}
	if m, err := stream.Recv(); err != nil || !m.GetVerdict().GetRecorded() {
		t.Fatalf("record before the database is lost: %v %v", m, err)
	}
	if err := r.cluster.Stop(context.Background()); err != nil {
		t.Fatalf("stop the database: %v", err)
	}
	defer r.start()
	if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: shipRecord("DB-LOST-2")}); err != nil {
		t.Fatal(err)
	}
	_, err = stream.Recv()
	if status.Code(err) != codes.Unavailable {
		t.Fatalf("record after the database is lost: %v; want Unavailable", err)
	}
}
