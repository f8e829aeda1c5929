package service_test

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/credentials/insecure"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"

	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// The replica test: three real `halovet serve` processes on loopback share one PostgreSQL
// database, and 600 concurrent RecordShipments calls race for one quota line that admits
// exactly replicaFits of them. The store's row locks must let exactly that many through.

const (
	replicaCalls      = 600
	replicaFits       = 137
	replicaWorkers    = 60
	replicaServers    = 3
	replicaLicence    = "XA-IMP-2026-901"
	replicaCompany    = "XA-2001"
	replicaAllocation = "0.753500000" // 137 x 0.0055 ODP t, as numeric(30,9) text
)

// Invented registry (user-assigned codes; no real country's status is implied): reporting
// Party XA (Article 5), partner XB, one company, one import licence with one quota line in
// ODP tonnes. Each record is 100 kg of HCFC-22 = 0.0055 ODP t (ODP 0.055; source: Montreal
// Protocol Annex C Group I), so the line admits exactly 137 records.
const replicaRegistry = `{
  "about": "INVENTED registry for the replica test",
  "parties": [
    {"countryCode": "XA", "name": "Xandria (invented)", "partyType": "PARTY_TYPE_ARTICLE_5", "hfcGroup": "HFC_GROUP_A5_GROUP_1", "reportingParty": true,
     "boundFrom": {"C/I": "2000-01-01"}},
    {"countryCode": "XB", "name": "Borealia (invented)", "partyType": "PARTY_TYPE_NON_ARTICLE_5", "hfcGroup": "HFC_GROUP_NON_A5",
     "boundFrom": {"C/I": "1994-06-14"}}
  ],
  "companies": [{"companyId": "XA-2001", "name": "Replica Test Importer (invented)", "countryCode": "XA"}],
  "licences": [
    {"licenceNumber": "XA-IMP-2026-901", "companyId": "XA-2001", "directions": ["DIRECTION_IMPORT"], "validFrom": "2026-01-01", "validTo": "2026-12-31",
     "status": "LICENCE_STATUS_ACTIVE",
     "quotaLines": [{"lineNumber": 1, "annexGroup": "C/I", "unit": "QUOTA_UNIT_ODP_TONNES", "allocatedAmount": "0.7535"}]}
  ]
}`

// buildHalovet builds the real binary into dir.
func buildHalovet(t testing.TB, dir string) string {
	t.Helper()
	bin := filepath.Join(dir, "halovet")
	cmd := exec.Command("go", "build", "-o", bin, "./cmd/halovet")
	cmd.Dir = ".." // the module root
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go build ./cmd/halovet: %v\n%s", err, out)
	}
	return bin
}

// runHalovet runs a client verb of the binary and returns its output.
func runHalovet(t testing.TB, bin string, args ...string) string {
	t.Helper()
	cmd := exec.Command(bin, args...)
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("halovet %s: %v\n%s", strings.Join(args, " "), err, out)
	}
	return string(out)
}

// syncBuffer is a bytes.Buffer safe for a process writing while the test reads.
type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// replica is one running `halovet serve` process.
type replica struct {
	cmd    *exec.Cmd
	addr   string
	log    *syncBuffer
	exited chan struct{}
	err    error // set when exited is closed
}

// freeLoopbackAddr returns a loopback address with a port free at the time of the call.
func freeLoopbackAddr(t testing.TB) string {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().String()
}

func startReplica(t testing.TB, bin, url string) *replica {
	t.Helper()
	r := &replica{addr: freeLoopbackAddr(t), log: &syncBuffer{}, exited: make(chan struct{})}
	r.cmd = exec.Command(bin, "serve", "--open-access", "--database-url", url, "--listen", r.addr, "--http-listen", "", "--grace-period", "5s", "--log-level", "warn")
	r.cmd.Stdout, r.cmd.Stderr = r.log, r.log
	if err := r.cmd.Start(); err != nil {
		t.Fatalf("start halovet serve: %v", err)
	}
	go func() { r.err = r.cmd.Wait(); close(r.exited) }()
	t.Cleanup(func() { // a replica the test did not stop is killed
		select {
		case <-r.exited:
		default:
			_ = r.cmd.Process.Kill()
			<-r.exited
		}
	})
	return r
}

// waitServing polls grpc.health.v1 until the server reports SERVING.
func (r *replica) waitServing(t testing.TB, conn *grpc.ClientConn) {
	t.Helper()
	hc := healthpb.NewHealthClient(conn)
	deadline := time.Now().Add(30 * time.Second)
	for time.Now().Before(deadline) {
		ctx, cancel := context.WithTimeout(context.Background(), time.Second)
		resp, err := hc.Check(ctx, &healthpb.HealthCheckRequest{})
		cancel()
		if err == nil && resp.GetStatus() == healthpb.HealthCheckResponse_SERVING {
			return
		}
		select {
		case <-r.exited:
			t.Fatalf("halovet serve on %s exited before serving (%v):\n%s", r.addr, r.err, r.log)
		case <-time.After(50 * time.Millisecond):
		}
	}
	t.Fatalf("halovet serve on %s did not report SERVING within 30 s:\n%s", r.addr, r.log)
}

// stop sends SIGTERM and checks that the process exits 0.
func (r *replica) stop(t testing.TB) {
	t.Helper()
	if err := r.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Errorf("SIGTERM to the server on %s: %v", r.addr, err)
		return
	}
	select {
	case <-r.exited:
		if r.err != nil {
			t.Errorf("server on %s exited with %v after SIGTERM; want exit code 0:\n%s", r.addr, r.err, r.log)
		}
	case <-time.After(20 * time.Second):
		t.Errorf("server on %s did not exit within 20 s of SIGTERM:\n%s", r.addr, r.log)
	}
}

func replicaRecord(i int) *halovetv1.ShipmentRecord {
	return &halovetv1.ShipmentRecord{RecordKey: fmt.Sprintf("RPL-%04d", i), Direction: halovetv1.Direction_DIRECTION_IMPORT,
		CompanyId: replicaCompany, LicenceNumber: replicaLicence, PartnerCountry: "XB", DeclarationDate: "2026-06-15",
		Substance: "HCFC-22", TotalNetQuantity: "100", QuantityUnit: "kg", Purpose: halovetv1.Purpose_PURPOSE_SERVICING}
}

// recordOne records one record in its own RecordShipments call.
func recordOne(ctx context.Context, c halovetv1.ShipmentServiceClient, rec *halovetv1.ShipmentRecord) (*halovetv1.Verdict, error) {
	ctx, cancel := context.WithTimeout(ctx, 30*time.Second)
	defer cancel()
	s, err := c.RecordShipments(ctx)
	if err != nil {
		return nil, err
	}
	if err := s.Send(&halovetv1.RecordShipmentsRequest{Record: rec}); err != nil {
		return nil, err
	}
	if err := s.CloseSend(); err != nil {
		return nil, err
	}
	m, err := s.Recv()
	if err != nil {
		return nil, err
	}
	v := m.GetVerdict()
	if v == nil {
		return nil, fmt.Errorf("first message is %v, not a verdict", m)
	}
	m, err = s.Recv()
	if err != nil {
		return nil, err
	}
	sum := m.GetSummary()
	if sum == nil || sum.GetRecords() != 1 {
		return nil, fmt.Errorf("closing message %v; want a summary of 1 record", m)
	}
	if stored := v.GetRecorded() && !v.GetReplayed(); stored != (sum.GetRecorded() == 1) {
		return nil, fmt.Errorf("verdict recorded %t, but the summary counts %d recorded", stored, sum.GetRecorded())
	}
	if _, err := s.Recv(); !errors.Is(err, io.EOF) {
		return nil, fmt.Errorf("after the summary: %v; want the end of the stream", err)
	}
	return v, nil
}

func TestReplicasShareOneQuota(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and runs three server processes")
	}
	start := time.Now()
	dir := t.TempDir()
	bin := buildHalovet(t, dir)
	t.Logf("built the binary in %v", time.Since(start).Round(time.Millisecond))

	// An empty database: `halovet migrate` gives it the schema.
	url := pgtest.NewDatabase(t, "halovet_replicas_empty", func(context.Context, string) error { return nil })
	if out := runHalovet(t, bin, "migrate", "--database-url", url); !strings.Contains(out, "schema at version") {
		t.Fatalf("halovet migrate printed %q; want the schema version", out)
	}

	replicas := make([]*replica, replicaServers)
	conns := make([]*grpc.ClientConn, replicaServers)
	for i := range replicas {
		replicas[i] = startReplica(t, bin, url)
	}
	for i, r := range replicas {
		conn, err := grpc.NewClient(r.addr, grpc.WithTransportCredentials(insecure.NewCredentials()))
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() { _ = conn.Close() })
		conns[i] = conn
		r.waitServing(t, conn)
	}

	regPath := filepath.Join(dir, "registry.json")
	if err := os.WriteFile(regPath, []byte(replicaRegistry), 0o644); err != nil {
		t.Fatal(err)
	}
	if out := runHalovet(t, bin, "load", "--server", replicas[0].addr, regPath); !strings.Contains(out, "1 licences") {
		t.Fatalf("halovet load printed %q; want 1 licence loaded", out)
	}

	st, err := store.Open(context.Background(), url)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(st.Close)
	pool := st.Pool()
	ctx := context.Background()

	// Watch the balance while the calls race: it must never go below zero.
	watchCtx, stopWatch := context.WithCancel(ctx)
	var watched atomic.Int64
	var watchErr atomic.Value
	watchDone := make(chan struct{})
	go func() {
		defer close(watchDone)
		for watchCtx.Err() == nil {
			var left string
			var ok bool
			err := pool.QueryRow(watchCtx, `SELECT (allocated - drawn)::text, allocated - drawn >= 0 FROM quota_lines
			    WHERE licence_number = $1 AND line_number = 1`, replicaLicence).Scan(&left, &ok)
			if err != nil {
				if watchCtx.Err() == nil {
					watchErr.Store(fmt.Sprintf("reading the balance: %v", err))
				}
				return
			}
			if !ok {
				watchErr.Store("the balance went below zero: " + left)
				return
			}
			watched.Add(1)
			time.Sleep(2 * time.Millisecond)
		}
	}()

	// 600 calls, one record each, from 60 workers, spread round-robin over the servers.
	clients := make([]halovetv1.ShipmentServiceClient, replicaServers)
	for i, c := range conns {
		clients[i] = halovetv1.NewShipmentServiceClient(c)
	}
	verdicts := make([]*halovetv1.Verdict, replicaCalls)
	errs := make([]error, replicaCalls)
	jobs := make(chan int)
	var wg sync.WaitGroup
	raceStart := time.Now()
	for w := 0; w < replicaWorkers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range jobs {
				verdicts[i], errs[i] = recordOne(ctx, clients[i%replicaServers], replicaRecord(i))
			}
		}()
	}
	for i := 0; i < replicaCalls; i++ {
		jobs <- i
	}
	close(jobs)
	wg.Wait()
	stopWatch()
	<-watchDone
	t.Logf("%d calls on %d servers in %v; balance read %d times while they ran", replicaCalls, replicaServers,
		time.Since(raceStart).Round(time.Millisecond), watched.Load())
	if msg, _ := watchErr.Load().(string); msg != "" {
		t.Error(msg)
	}

	recorded, quotaShort := 0, 0
	for i, v := range verdicts {
		if errs[i] != nil {
			t.Errorf("call %d (server %d): %v", i, i%replicaServers, errs[i])
			continue
		}
		// Notices may come along (QUOTA_NEAR_LIMIT, judged on the balance the call started
		// with); the errors decide.
		var codes, errCodes []string
		for _, f := range v.GetFindings() {
			codes = append(codes, f.GetCode())
			if f.GetSeverity() == halovetv1.Severity_SEVERITY_ERROR {
				errCodes = append(errCodes, f.GetCode())
			}
		}
		switch {
		case v.GetRecorded() && !v.GetReplayed() && v.GetOutcome() != halovetv1.Outcome_OUTCOME_REJECTED && len(errCodes) == 0:
			recorded++
		case v.GetOutcome() == halovetv1.Outcome_OUTCOME_REJECTED && !v.GetRecorded() &&
			len(errCodes) == 1 && errCodes[0] == "QUOTA_EXCEEDED":
			quotaShort++
		default:
			t.Errorf("call %d: outcome %v recorded %t replayed %t codes %v; want recorded, or rejected with the one error QUOTA_EXCEEDED",
				i, v.GetOutcome(), v.GetRecorded(), v.GetReplayed(), codes)
		}
	}
	if recorded != replicaFits || quotaShort != replicaCalls-replicaFits {
		t.Errorf("%d calls recorded and %d rejected with QUOTA_EXCEEDED; want exactly %d and %d", recorded, quotaShort,
			replicaFits, replicaCalls-replicaFits)
	}

	// The database agrees, exactly, in numeric arithmetic.
	var allocated, drawn, sumODP, sumDraws string
	var rows int
	if err := pool.QueryRow(ctx, `SELECT allocated::text, drawn::text FROM quota_lines WHERE licence_number = $1 AND line_number = 1`,
		replicaLicence).Scan(&allocated, &drawn); err != nil {
		t.Fatal(err)
	}
	if err := pool.QueryRow(ctx, `SELECT count(*), COALESCE(sum(odp_tonnes), 0)::numeric(30,9)::text FROM shipments WHERE licence_number = $1`,
		replicaLicence).Scan(&rows, &sumODP); err != nil {
		t.Fatal(err)
	}
	if err := pool.QueryRow(ctx, `SELECT COALESCE(sum(amount), 0)::numeric(30,9)::text FROM quota_draws WHERE licence_number = $1`,
		replicaLicence).Scan(&sumDraws); err != nil {
		t.Fatal(err)
	}
	if allocated != replicaAllocation || drawn != replicaAllocation {
		t.Errorf("quota line: allocated %s, drawn %s; want both %s (the line exactly used up)", allocated, drawn, replicaAllocation)
	}
	if rows != replicaFits {
		t.Errorf("%d shipments stored; want %d", rows, replicaFits)
	}
	if sumODP != drawn || sumDraws != drawn {
		t.Errorf("stored ODP tonnes sum to %s and the draws to %s; want both equal to drawn %s", sumODP, sumDraws, drawn)
	}

	for _, r := range replicas {
		r.stop(t)
	}
	t.Logf("replica test took %v", time.Since(start).Round(time.Millisecond))
}
