package service_test

import (
	"context"
	"fmt"
	"net"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/credentials/insecure"

	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

// serveUntil runs a server on st until the returned stop is called; stop cuts calls in
// flight after a 1 ms grace, as a SIGTERM with a short grace would.
func serveUntil(t *testing.T, st *store.Store) (*grpc.ClientConn, func()) {
	t.Helper()
	holder, err := service.LoadCatalogue(context.Background(), st, quietLogger())
	if err != nil {
		t.Fatal(err)
	}
	srv := service.New(st, holder, service.Options{Logger: quietLogger(), GracePeriod: time.Millisecond, OpenAccess: true})
	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	served := make(chan error, 1)
	go func() { served <- srv.Serve(ctx, lis) }()
	conn, err := grpc.NewClient(lis.Addr().String(), grpc.WithTransportCredentials(insecure.NewCredentials()))
	if err != nil {
		t.Fatal(err)
	}
	stopped := false
	stop := func() {
		if stopped {
			return
		}
		stopped = true
		cancel()
		<-served
		_ = conn.Close()
	}
	t.Cleanup(stop)
	return conn, stop
}

// TestFaultServerCutMidRecording: a recording stream is cut by a server shutdown with a
// 1 ms grace while records are in flight; the client's documented retry (send the whole
// file again) on a new server gives exactly the state of one clean run, recounted against
// a model computed here: the keys, the rows, and the quota drawn, and the ledger's
// invariants hold.
func TestFaultServerCutMidRecording(t *testing.T) {
	url := pgtest.NewDatabase(t, "halovet_service", migrateServiceDB)
	st, err := store.Open(context.Background(), url)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	conn, stop := serveUntil(t, st)
	shipRegistry(t, conn)

	const n = 40
	recs := make([]*halovetv1.ShipmentRecord, n)
	for i := range recs {
		recs[i] = shipRecord(fmt.Sprintf("FAULT-%02d", i+1))
	}
	// First attempt: 10 records answered one by one (so stored), 30 more sent unanswered,
	// then the server goes down.
	stream, err := halovetv1.NewShipmentServiceClient(conn).RecordShipments(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	for i := range 10 {
		if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: recs[i]}); err != nil {
			t.Fatal(err)
		}
		if m, err := stream.Recv(); err != nil || !m.GetVerdict().GetRecorded() {
			t.Fatalf("record %d: %v %v", i+1, m, err)
		}
	}
	for i := 10; i < n; i++ {
		if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: recs[i]}); err != nil {
			break // the server may be going already
		}
	}
	stop()
	for {
		if _, err := stream.Recv(); err != nil {
			break // the stream ends with an error, or EOF if it finished first
		}
	}

	// The retry on a new server: the whole file again.
	conn2, _ := serveUntil(t, st)
	vs, sum := shipRecordCall(t, halovetv1.NewShipmentServiceClient(conn2), recs...)
	for i, v := range vs {
		if !v.GetRecorded() {
			t.Fatalf("retry: record %d not recorded: %v", i+1, v)
		}
	}
	if sum.GetRecorded()+sum.GetReplayed() != n || sum.GetReplayed() < 10 {
		t.Fatalf("retry summary %v; want %d recorded or replayed, at least the 10 answered ones replayed", sum, n)
	}

	t.Logf("retry: %d replayed, %d newly recorded", sum.GetReplayed(), sum.GetRecorded())
	// The model: n distinct keys, n rows, and on line 1 (Annex C/I, ODP t) n × 100 kg of
	// HCFC-22 × ODP 0.055 (Montreal Protocol Annex C Group I) = n × 0.0055 ODP t.
	var rows, keys int
	if err := st.Pool().QueryRow(context.Background(), `SELECT count(*), count(DISTINCT record_key) FROM shipments WHERE record_key LIKE 'FAULT-%'`).Scan(&rows, &keys); err != nil {
		t.Fatal(err)
	}
	if rows != n || keys != n {
		t.Fatalf("%d rows, %d keys stored; want %d each", rows, keys, n)
	}
	drawn, draws := shipLineDrawn(t, st, shipLicence, 1)
	if want := fmt.Sprintf("%.9f", n*0.0055); drawn != want || draws != want {
		t.Fatalf("line 1 drawn %s, draws sum %s; want %s", drawn, draws, want)
	}
	rep, err := st.CheckInvariants(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(rep.Breaches) > 0 || rep.Draws < n {
		t.Fatalf("invariants: %d draws checked, breaches %v", rep.Draws, rep.Breaches)
	}
}
