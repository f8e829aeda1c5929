package service_test

import (
	"context"
	"fmt"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"google.golang.org/grpc"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"

	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/service"
)

// TestHealthDuringRollingUpgrade: a server whose database was migrated by a newer binary
// (a version beyond this binary's newest migration) stays SERVING, as an old replica must
// during a rolling upgrade; it turns NOT_SERVING only when an applied migration marks this
// binary's schema as too old, and back when that mark goes.
func TestHealthDuringRollingUpgrade(t *testing.T) {
	t.Parallel()
	url := pgtest.NewDatabase(t, "halovet_service", migrateServiceDB)
	ctx := context.Background()
	db, err := pgx.Connect(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close(ctx)
	var head int64
	if err := db.QueryRow(ctx, `SELECT max(version_id) FROM goose_db_version WHERE is_applied`).Scan(&head); err != nil {
		t.Fatal(err)
	}
	// What a newer binary's migration leaves behind (the schema change itself does not matter
	// to the check).
	newer := head + 1
	if _, err := db.Exec(ctx, `INSERT INTO goose_db_version (version_id, is_applied) VALUES ($1, true)`, newer); err != nil {
		t.Fatal(err)
	}
	conn, _, _ := startServerOn(t, url, service.Options{HealthInterval: 20 * time.Millisecond})
	waitHealth(t, conn, healthpb.HealthCheckResponse_SERVING, "schema one version newer, compatible")

	if _, err := db.Exec(ctx, `INSERT INTO schema_compatibility (version, oldest_server_schema, reason)
		VALUES ($1, $1, 'the licences table was split')`, newer); err != nil {
		t.Fatal(err)
	}
	waitHealth(t, conn, healthpb.HealthCheckResponse_NOT_SERVING, "a newer migration marks this server too old")

	if _, err := db.Exec(ctx, `UPDATE schema_compatibility SET oldest_server_schema = $1 WHERE version = $2`, head, newer); err != nil {
		t.Fatal(err)
	}
	waitHealth(t, conn, healthpb.HealthCheckResponse_SERVING, "the mark allows this server's schema")

	// A database behind the binary is never served.
	if _, err := db.Exec(ctx, `DELETE FROM goose_db_version WHERE version_id >= $1`, head); err != nil {
		t.Fatal(err)
	}
	waitHealth(t, conn, healthpb.HealthCheckResponse_NOT_SERVING, "database behind the binary")
}

func waitHealth(t *testing.T, conn *grpc.ClientConn, want healthpb.HealthCheckResponse_ServingStatus, situation string) {
	t.Helper()
	hc := healthpb.NewHealthClient(conn)
	var last string
	for deadline := time.Now().Add(10 * time.Second); time.Now().Before(deadline); time.Sleep(20 * time.Millisecond) {
		resp, err := hc.Check(context.Background(), &healthpb.HealthCheckRequest{})
		if err == nil && resp.GetStatus() == want {
			return
		}
		last = fmt.Sprint(resp.GetStatus(), err)
	}
	t.Fatalf("%s: health %s; want %s", situation, last, want)
}
