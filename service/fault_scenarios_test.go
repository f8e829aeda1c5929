package service_test

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"sync"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/pglocal"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// The fault scenarios below each interrupt a recording stream part-way, then run the
// documented retry (send the whole file again; an Unavailable answer is retried after a
// pause) and recount against a model kept here, independently of the server: every key
// stored once, one row per key, and the quota drawn equal to the records' sum, exactly.
// `make test` runs each scenario once; `make fault-long` (HALOVET_FAULT_ROUNDS=20) runs that
// many rounds of randomly chosen faults at random points on one register.

// faultKg is each fault record's quantity: 1 kg of HCFC-22 = 0.000055 ODP t (ODP 0.055,
// Montreal Protocol Annex C Group I), 55,000 billionths of an ODP tonne on licence line 1.
const (
	faultKg               = "1"
	faultDrawBillionths   = 55000
	faultRecordsPerRound  = 24
	faultUnavailableRetry = 40
)

// faultRig is one register on a private cluster of its own, so that a scenario can stop and
// restart the database under a running server.
type faultRig struct {
	t       *testing.T
	cluster *pglocal.Cluster
	opts    pglocal.Options
	url     string
	st      *store.Store
	model   map[string]bool // keys the register must hold once the retry is done
}

func newFaultRig(t *testing.T) *faultRig {
	t.Helper()
	dir := t.TempDir()
	for _, d := range []string{filepath.Dir(dir), dir} {
		if err := os.Chmod(d, 0o755); err != nil { // lets pglocal's unprivileged account in when root
			t.Fatal(err)
		}
	}
	r := &faultRig{t: t, opts: pglocal.Options{DataDir: filepath.Join(dir, "pg"), Ephemeral: true}, model: map[string]bool{}}
	r.start()
	r.opts.Port = r.cluster.Port() // a restart comes back on the same address
	t.Cleanup(func() {
		if err := r.cluster.Stop(context.Background()); err != nil {
			t.Errorf("stop the fault cluster: %v", err)
		}
		if r.cluster.DataDir() != r.opts.DataDir {
			_ = os.RemoveAll(r.cluster.DataDir())
		}
	})
	ctx := context.Background()
	admin, err := pgx.Connect(ctx, r.cluster.URL("postgres"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := admin.Exec(ctx, "CREATE DATABASE halovet_fault"); err != nil {
		t.Fatal(err)
	}
	_ = admin.Close(ctx)
	r.url = r.cluster.URL("halovet_fault")
	if err := migrateServiceDB(ctx, r.url); err != nil {
		t.Fatal(err)
	}
	if r.st, err = store.Open(ctx, r.url); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(r.st.Close)
	conn, _ := serveUntil(t, r.st)
	shipRegistry(t, conn)
	return r
}

func (r *faultRig) start() {
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	c, err := pglocal.Start(ctx, r.opts)
	if err != nil {
		r.t.Fatalf("start the fault cluster: %v", err)
	}
	r.cluster = c
}

// restartDatabase stops the cluster (open sessions are ended) and starts it again.
func (r *faultRig) restartDatabase() {
	if err := r.cluster.Stop(context.Background()); err != nil {
		r.t.Fatalf("stop the fault cluster: %v", err)
	}
	r.start()
}

func faultRecords(round int) []*halovetv1.ShipmentRecord {
	recs := make([]*halovetv1.ShipmentRecord, faultRecordsPerRound)
	for i := range recs {
		recs[i] = shipRecord(fmt.Sprintf("FS-%02d-%02d", round, i+1))
		recs[i].TotalNetQuantity = faultKg
	}
	return recs
}

// sendPart opens a recording stream on conn, has the first `answered` records answered (so
// stored), sends the rest without waiting, then runs fault and reads the stream to its end.
func sendPart(t *testing.T, ctx context.Context, conn *grpc.ClientConn, recs []*halovetv1.ShipmentRecord, answered int, fault func()) {
	t.Helper()
	ctx, cancel := context.WithTimeout(ctx, time.Minute)
	defer cancel()
	stream, err := halovetv1.NewShipmentServiceClient(conn).RecordShipments(ctx)
	if err != nil {
		t.Fatal(err)
	}
	for i := range answered {
		if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: recs[i]}); err != nil {
			t.Fatal(err)
		}
		if m, err := stream.Recv(); err != nil || !m.GetVerdict().GetRecorded() {
			t.Fatalf("record %d before the fault: %v %v", i+1, m, err)
		}
	}
	for i := answered; i < len(recs); i++ {
		if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: recs[i]}); err != nil {
			break
		}
	}
	fault()
	// A stream the fault left alone (everything answered before it) ends when the client
	// says it is done.
	_ = stream.CloseSend()
	for {
		if _, err := stream.Recv(); err != nil {
			return
		}
	}
}

// retry is the documented client retry: the whole file again, after a pause while the
// server answers Unavailable. It returns the summary of the run that went through.
func retry(t *testing.T, conn *grpc.ClientConn, recs []*halovetv1.ShipmentRecord) *halovetv1.BatchSummary {
	t.Helper()
	for attempt := 0; ; attempt++ {
		sum, err := recordAll(conn, recs)
		if err == nil {
			return sum
		}
		if c := status.Code(err); (c != codes.Unavailable && c != codes.Aborted) || attempt == faultUnavailableRetry {
			t.Fatalf("retry %d: %v", attempt+1, err)
		}
		time.Sleep(250 * time.Millisecond)
	}
}

// recordAll records recs in one stream and fails unless every record is recorded.
func recordAll(conn *grpc.ClientConn, recs []*halovetv1.ShipmentRecord) (*halovetv1.BatchSummary, error) {
	ctx, cancel := context.WithTimeout(context.Background(), time.Minute)
	defer cancel()
	stream, err := halovetv1.NewShipmentServiceClient(conn).RecordShipments(ctx)
	if err != nil {
		return nil, err
	}
	for _, r := range recs {
		if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: r}); err != nil {
			break // the answer below says why
		}
	}
	_ = stream.CloseSend()
	n := 0
	for {
		m, err := stream.Recv()
		if errors.Is(err, io.EOF) {
			return nil, fmt.Errorf("stream ended after %d verdicts without a summary", n)
		}
		if err != nil {
			return nil, err
		}
		if s := m.GetSummary(); s != nil {
			return s, nil
		}
		if v := m.GetVerdict(); !v.GetRecorded() {
			return nil, fmt.Errorf("record %s not recorded: %v", v.GetRecordKey(), shipCodes(v))
		}
		n++
	}
}

// recount compares the register with the model: keys, rows and the drawn amount exactly,
// and the ledger's invariants.
func (r *faultRig) recount(what string) {
	t := r.t
	t.Helper()
	ctx := context.Background()
	var rows, keys int
	if err := r.st.Pool().QueryRow(ctx, `SELECT count(*), count(DISTINCT record_key) FROM shipments WHERE record_key LIKE 'FS-%'`).Scan(&rows, &keys); err != nil {
		t.Fatalf("%s: recount: %v", what, err)
	}
	if rows != len(r.model) || keys != len(r.model) {
		t.Fatalf("%s: %d rows, %d keys stored; the model holds %d keys", what, rows, keys, len(r.model))
	}
	b := int64(len(r.model)) * faultDrawBillionths
	want := strconv.FormatInt(b/1e9, 10) + "." + fmt.Sprintf("%09d", b%1e9)
	if drawn, draws := shipLineDrawn(t, r.st, shipLicence, 1); drawn != want || draws != want {
		t.Fatalf("%s: line 1 drawn %s, draws sum %s; the model says %s", what, drawn, draws, want)
	}
	rep, err := r.st.CheckInvariants(ctx)
	if err != nil {
		t.Fatalf("%s: invariants: %v", what, err)
	}
	if len(rep.Breaches) > 0 {
		t.Fatalf("%s: invariant breaches %v", what, rep.Breaches)
	}
	chain, err := r.st.VerifyAuditChain(ctx)
	if err != nil || len(chain.Broken) > 0 || chain.Events == 0 {
		t.Fatalf("%s: audit chain: %d events, broken %v, %v", what, chain.Events, chain.Broken, err)
	}
}

// faultKinds are the faults a round may inject.
var faultKinds = []string{"database restart", "server cut", "client gone", "replicas racing"}

// runFault runs one round: round's records, interrupted by kind after `answered` of them,
// then the retry and the recount.
func (r *faultRig) runFault(round int, kind string, answered int) {
	t := r.t
	recs := faultRecords(round)
	for _, x := range recs {
		r.model[x.GetRecordKey()] = true
	}
	what := fmt.Sprintf("round %d (%s after %d)", round, kind, answered)
	switch kind {
	case "database restart":
		// The server keeps running while its database goes away and comes back.
		conn, _ := serveUntil(t, r.st)
		sendPart(t, context.Background(), conn, recs, answered, r.restartDatabase)
		retry(t, conn, recs)
	case "server cut":
		// SIGTERM with a 1 ms grace: calls in flight are cut; the retry goes to a new server.
		conn, stop := serveUntil(t, r.st)
		sendPart(t, context.Background(), conn, recs, answered, stop)
		conn2, _ := serveUntil(t, r.st)
		retry(t, conn2, recs)
	case "client gone":
		// The client process dies: its stream is cancelled with records in flight.
		conn, _ := serveUntil(t, r.st)
		ctx, cancel := context.WithCancel(context.Background())
		sendPart(t, ctx, conn, recs, answered, cancel)
		retry(t, conn, recs)
	case "replicas racing":
		// Two replicas on one database, each sent the whole file at once (two clients retrying
		// at the same moment); both must answer every record recorded, one of them as a replay.
		conns := []*grpc.ClientConn{}
		for range 2 {
			c, _ := serveUntil(t, r.st)
			conns = append(conns, c)
		}
		var wg sync.WaitGroup
		sums := make([]*halovetv1.BatchSummary, len(conns))
		for i, c := range conns {
			wg.Add(1)
			go func() { defer wg.Done(); sums[i] = retryNoFatal(t, c, recs) }()
		}
		wg.Wait()
		for i, s := range sums {
			if s == nil {
				t.Fatalf("%s: replica %d gave no summary", what, i+1)
			}
		}
		if got := sums[0].GetRecorded() + sums[1].GetRecorded(); got != int64(len(recs)) {
			t.Fatalf("%s: replicas recorded %d and %d new records; together they must record each of the %d once", what, sums[0].GetRecorded(), sums[1].GetRecorded(), len(recs))
		}
	default:
		t.Fatalf("unknown fault %q", kind)
	}
	r.recount(what)
}

// retryNoFatal is retry for goroutines: it reports failures with Errorf and returns nil.
func retryNoFatal(t *testing.T, conn *grpc.ClientConn, recs []*halovetv1.ShipmentRecord) *halovetv1.BatchSummary {
	for attempt := 0; ; attempt++ {
		sum, err := recordAll(conn, recs)
		if err == nil {
			return sum
		}
		if c := status.Code(err); (c != codes.Unavailable && c != codes.Aborted) || attempt == faultUnavailableRetry {
			t.Errorf("retry %d: %v", attempt+1, err)
			return nil
		}
		time.Sleep(250 * time.Millisecond)
	}
}

// TestFaultScenarios runs each fault once (the short form `make test` runs) and, with
// HALOVET_FAULT_ROUNDS=N, N more rounds of random faults at random points.
func TestFaultScenarios(t *testing.T) {
	r := newFaultRig(t)
	round := 0
	for _, kind := range faultKinds {
		round++
		r.runFault(round, kind, faultRecordsPerRound/3)
	}
	n, _ := strconv.Atoi(os.Getenv("HALOVET_FAULT_ROUNDS"))
	seed := uint64(time.Now().UnixNano())
	if s, err := strconv.ParseUint(os.Getenv("HALOVET_FAULT_SEED"), 10, 64); err == nil {
		seed = s
	}
	if n > 0 {
		t.Logf("%d random rounds, HALOVET_FAULT_SEED=%d", n, seed)
	}
	rng := rand.New(rand.NewPCG(seed, 1))
	for range n {
		round++
		r.runFault(round, faultKinds[rng.IntN(len(faultKinds))], rng.IntN(faultRecordsPerRound))
	}
}
