package service_test

import (
	"context"
	"io"
	"runtime"
	"strings"
	"testing"
	"time"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
	"google.golang.org/grpc/mem"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// TestLimitsManyComponents: a composition repeating one component 10,000 times (about
// 200 KB on the wire) is answered with one finding, a small answer and little memory.
func TestLimitsManyComponents(t *testing.T) {
	conn, _ := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	r := shipRecord("MANY")
	r.Substance = ""
	for range 10000 {
		r.DeclaredComposition = append(r.DeclaredComposition, &halovetv1.MixtureShare{Identifier: "HFC-32", MassPercent: "0.01"})
	}
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	resp, err := client.CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: r})
	runtime.ReadMemStats(&after)
	if err != nil {
		t.Fatal(err)
	}
	v := resp.GetVerdict()
	if len(v.GetFindings()) != 1 || v.GetFindings()[0].GetCode() != "MIX_TOO_MANY" || v.GetOutcome() != halovetv1.Outcome_OUTCOME_REJECTED {
		t.Fatalf("findings %v, outcome %v; want one MIX_TOO_MANY, rejected", shipCodes(v), v.GetOutcome())
	}
	if n := proto.Size(resp); n > 4096 {
		t.Errorf("answer of %d bytes; want under 4 KiB", n)
	}
	// Client and server share this process: everything allocated during the call, both
	// sides, encoding included.
	if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 64<<20 {
		t.Errorf("the call allocated %d MB; want under 64 MB", alloc>>20)
	}
}

// TestLimitsNULKeyInStream: a recording stream with a NUL byte in one record's key and in
// another's formula stores every other record and rejects those two on their fields; the
// retry of the whole stream is a clean replay.
func TestLimitsNULKeyInStream(t *testing.T) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	nulKey := shipRecord("NUL-\x00-2")
	nulFormula := shipRecord("NUL-3")
	nulFormula.DeclaredFormula = "CHCl\x00F2"
	recs := []*halovetv1.ShipmentRecord{shipRecord("NUL-1"), nulKey, nulFormula, shipRecord("NUL-4")}
	for attempt := 1; attempt <= 2; attempt++ {
		vs, sum := shipRecordCall(t, client, recs...)
		if attempt == 1 && (!vs[0].GetRecorded() || !vs[3].GetRecorded()) {
			t.Fatalf("attempt 1: the clean records were not stored: %v / %v", vs[0], vs[3])
		}
		if attempt == 2 && (sum.GetReplayed() != 2 || sum.GetRecorded() != 0) {
			t.Fatalf("attempt 2: summary %v; want 2 replayed, 0 newly recorded", sum)
		}
		if vs[1].GetRecorded() || shipCodes(vs[1])[0] != "KEY_INVALID" || !strings.Contains(vs[1].GetFindings()[0].GetMessage(), "NUL") {
			t.Errorf("attempt %d: the NUL key: %v", attempt, vs[1])
		}
		if vs[2].GetRecorded() || shipCodes(vs[2])[0] != "FIELD_TEXT_INVALID" || vs[2].GetFindings()[0].GetField() != "declared_formula" {
			t.Errorf("attempt %d: the NUL formula: %v", attempt, vs[2])
		}
	}
	var n int
	if err := st.Pool().QueryRow(context.Background(), `SELECT count(*) FROM shipments WHERE record_key LIKE 'NUL-%'`).Scan(&n); err != nil {
		t.Fatal(err)
	}
	if n != 2 {
		t.Fatalf("%d shipments stored; want 2", n)
	}
}

// TestLimitsMessageSize: a request above the receive limit is refused ResourceExhausted.
func TestLimitsMessageSize(t *testing.T) {
	conn, _, _ := startServerWith(t, service.Options{Limits: service.Limits{MaxRecvMsgBytes: 64 << 10}})
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	r := shipRecord("BIG")
	r.DeclaredFormula = strings.Repeat("C", 100<<10)
	_, err := client.CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: r})
	if status.Code(err) != codes.ResourceExhausted {
		t.Fatalf("a 100 KB request with a 64 KB limit: %v; want ResourceExhausted", err)
	}
	r.DeclaredFormula = strings.Repeat("C", 200)
	resp, err := client.CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: r})
	if err != nil || shipCodes(resp.GetVerdict())[0] != "FIELD_TOO_LONG" {
		t.Fatalf("a small request: %v %v; want a FIELD_TOO_LONG verdict", resp, err)
	}
}

// rawCodec sends bytes as they are, under the proto content subtype.
type rawCodec struct{}

func (rawCodec) Marshal(v any) (mem.BufferSlice, error) {
	return mem.BufferSlice{mem.SliceBuffer(*v.(*[]byte))}, nil
}
func (rawCodec) Unmarshal(data mem.BufferSlice, v any) error {
	*v.(*[]byte) = data.Materialize()
	return nil
}
func (rawCodec) Name() string { return "proto" }

// TestLimitsMalformedMessage: bytes that are no protocol buffer answer InvalidArgument,
// in a unary call and in a stream.
func TestLimitsMalformedMessage(t *testing.T) {
	conn, _ := startTestServer(t)
	shipRegistry(t, conn)
	junk := []byte{0x0a, 0xff, 0xff, 0xff} // field 1, length-delimited, a length that never ends
	var out []byte
	err := conn.Invoke(context.Background(), "/halovet.v1.ShipmentService/CheckShipment", &junk, &out, grpc.ForceCodecV2(rawCodec{}))
	if status.Code(err) != codes.InvalidArgument {
		t.Fatalf("unary: %v; want InvalidArgument", err)
	}
	desc := &grpc.StreamDesc{StreamName: "CheckShipments", ServerStreams: true, ClientStreams: true}
	s, err := conn.NewStream(context.Background(), desc, "/halovet.v1.ShipmentService/CheckShipments", grpc.ForceCodecV2(rawCodec{}))
	if err != nil {
		t.Fatal(err)
	}
	if err := s.SendMsg(&junk); err != nil {
		t.Fatal(err)
	}
	_ = s.CloseSend()
	if err := s.RecvMsg(&out); status.Code(err) != codes.InvalidArgument {
		t.Fatalf("stream: %v; want InvalidArgument", err)
	}
	// The server still answers well-formed calls.
	if _, err := halovetv1.NewShipmentServiceClient(conn).CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: shipRecord("OK")}); err != nil {
		t.Fatal(err)
	}
}

// TestLimitsInFlight: with every call slot taken by open streams, a further call is refused
// ResourceExhausted with a retry delay; health checks still answer; a slot freed is usable.
func TestLimitsInFlight(t *testing.T) {
	conn, _, _ := startServerWith(t, service.Options{Limits: service.Limits{MaxInFlight: 2}})
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var open []halovetv1.ShipmentService_CheckShipmentsClient
	for i := range 2 {
		s, err := client.CheckShipments(ctx)
		if err != nil {
			t.Fatal(err)
		}
		if err := s.Send(&halovetv1.CheckShipmentsRequest{Record: shipRecord("S")}); err != nil {
			t.Fatal(err)
		}
		if _, err := s.Recv(); err != nil { // the handler runs: the slot is held
			t.Fatalf("stream %d: %v", i, err)
		}
		open = append(open, s)
	}
	_, err := client.CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: shipRecord("X")})
	if status.Code(err) != codes.ResourceExhausted {
		t.Fatalf("third call: %v; want ResourceExhausted", err)
	}
	var retry *errdetails.RetryInfo
	for _, d := range status.Convert(err).Details() {
		if ri, ok := d.(*errdetails.RetryInfo); ok {
			retry = ri
		}
	}
	if retry == nil || retry.GetRetryDelay().AsDuration() <= 0 {
		t.Errorf("no retry delay in %v", status.Convert(err).Details())
	}
	if _, err := healthpb.NewHealthClient(conn).Check(context.Background(), &healthpb.HealthCheckRequest{Service: service.LivenessService}); err != nil {
		t.Errorf("health check refused: %v", err)
	}
	_ = open[0].CloseSend()
	for {
		if _, err := open[0].Recv(); err != nil {
			if err != io.EOF {
				t.Fatalf("closing stream: %v", err)
			}
			break
		}
	}
	// The slot is released when the handler returns, just after the summary is sent.
	var lastErr error
	for range 50 {
		if _, lastErr = client.CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: shipRecord("Y")}); lastErr == nil {
			break
		}
		time.Sleep(20 * time.Millisecond)
	}
	if lastErr != nil {
		t.Fatalf("after a stream closed: %v", lastErr)
	}
}

// TestLimitsStreamIdle: a stream that carries no message for the idle time is closed with
// DeadlineExceeded and a message that says why.
func TestLimitsStreamIdle(t *testing.T) {
	conn, _, _ := startServerWith(t, service.Options{Limits: service.Limits{StreamIdle: 200 * time.Millisecond}})
	shipRegistry(t, conn)
	s, err := halovetv1.NewShipmentServiceClient(conn).CheckShipments(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	_, err = s.Recv()
	if status.Code(err) != codes.DeadlineExceeded || !strings.Contains(err.Error(), "no message for 200ms") {
		t.Fatalf("idle stream: %v; want DeadlineExceeded naming the idle time", err)
	}
}

// TestLimitsRecordsPerMessage: a stream message with more records than the limit is refused.
func TestLimitsRecordsPerMessage(t *testing.T) {
	conn, _, _ := startServerWith(t, service.Options{Limits: service.Limits{MaxRecordsPerMessage: 3}})
	shipRegistry(t, conn)
	s, err := halovetv1.NewShipmentServiceClient(conn).CheckShipments(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	recs := []*halovetv1.ShipmentRecord{shipRecord("A"), shipRecord("B"), shipRecord("C"), shipRecord("D")}
	if err := s.Send(&halovetv1.CheckShipmentsRequest{Records: recs}); err != nil {
		t.Fatal(err)
	}
	_, err = s.Recv()
	if status.Code(err) != codes.InvalidArgument || !strings.Contains(err.Error(), "at most 3") {
		t.Fatalf("4 records with a limit of 3: %v; want InvalidArgument", err)
	}
}
