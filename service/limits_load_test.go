package service_test

import (
	"context"
	"runtime"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/credentials/insecure"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
	"google.golang.org/grpc/status"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// limitsPeakHeapBytes is the stated bound on the test process's peak heap (server and
// clients together) while the default limits are pushed: a 100 MB message, 10,000 streams
// held open without a message, and a flood of 5,000 unary calls (README "Limits").
const limitsPeakHeapBytes = 500 << 20

// heapWatch samples the heap in use until stop is called and returns the highest figure.
func heapWatch() (stop func() uint64) {
	var peak atomic.Uint64
	done := make(chan struct{})
	finished := make(chan struct{})
	go func() {
		defer close(finished)
		var m runtime.MemStats
		for {
			runtime.ReadMemStats(&m)
			if m.HeapInuse > peak.Load() {
				peak.Store(m.HeapInuse)
			}
			select {
			case <-done:
				return
			case <-time.After(20 * time.Millisecond):
			}
		}
	}()
	return func() uint64 { close(done); <-finished; return peak.Load() }
}

// TestLimitsUnderLoad pushes a server with its default limits and checks every call is
// answered or refused within them, the server keeps answering health checks, and the peak
// heap stays under limitsPeakHeapBytes.
func TestLimitsUnderLoad(t *testing.T) {
	conn, _, _ := startServerWith(t, service.Options{OpenAccess: true})
	shipRegistry(t, conn)
	addr := conn.Target()
	lim := service.DefaultLimits()
	stop := heapWatch()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()

	// A 100 MB message (its bytes sent as they are): refused on its length prefix, before
	// the server reads it.
	big := make([]byte, 100<<20)
	var out []byte
	err := conn.Invoke(ctx, "/halovet.v1.ShipmentService/CheckShipment", &big, &out,
		grpc.ForceCodecV2(rawCodec{}), grpc.MaxCallSendMsgSize(200<<20))
	if status.Code(err) != codes.ResourceExhausted {
		t.Errorf("a 100 MB request: %v; want ResourceExhausted (limit %d bytes)", err, lim.MaxRecvMsgBytes)
	}
	big = nil

	// 10,000 streams opened over 100 connections (the per-connection limit is 100) and left
	// without a message: MaxInFlight of them are held, every other one refused.
	const conns, perConn = 100, 100
	var opened, refused, other atomic.Int64
	streamCtx, closeStreams := context.WithCancel(ctx)
	var wg sync.WaitGroup
	for range conns {
		c, err := grpc.NewClient(addr, grpc.WithTransportCredentials(insecure.NewCredentials()))
		if err != nil {
			t.Fatal(err)
		}
		defer c.Close()
		client := halovetv1.NewShipmentServiceClient(c)
		for range perConn {
			wg.Add(1)
			go func() {
				defer wg.Done()
				s, err := client.CheckShipments(streamCtx)
				if err == nil {
					opened.Add(1)
					// A refusal comes as the stream's first answer; a held stream answers
					// nothing until the test closes it.
					_, err = s.Recv()
				}
				switch status.Code(err) {
				case codes.ResourceExhausted:
					refused.Add(1)
				case codes.Canceled:
				default:
					other.Add(1)
				}
			}()
		}
	}
	// Wait until every stream beyond MaxInFlight has been refused (or a minute has passed).
	want := int64(conns*perConn - lim.MaxInFlight)
	for deadline := time.Now().Add(time.Minute); refused.Load() < want && time.Now().Before(deadline); {
		time.Sleep(50 * time.Millisecond)
	}
	held := opened.Load() - refused.Load() - other.Load()
	if refused.Load() != want || other.Load() != 0 {
		t.Errorf("streams: %d opened, %d refused, %d other; want %d refused (all but MaxInFlight %d)", opened.Load(), refused.Load(), other.Load(), want, lim.MaxInFlight)
	}
	if _, err := healthpb.NewHealthClient(conn).Check(ctx, &healthpb.HealthCheckRequest{Service: service.LivenessService}); err != nil {
		t.Errorf("health check with the streams open: %v", err)
	}
	closeStreams()
	wg.Wait()

	// A flood of 5,000 unary checks from 200 goroutines: each answered or refused
	// ResourceExhausted, none lost.
	var ok, busy, failed atomic.Int64
	client := halovetv1.NewShipmentServiceClient(conn)
	for g := range 200 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for range 25 {
				_, err := client.CheckShipment(ctx, &halovetv1.CheckShipmentRequest{Record: shipRecord("F")})
				switch status.Code(err) {
				case codes.OK:
					ok.Add(1)
				case codes.ResourceExhausted:
					busy.Add(1)
				default:
					failed.Add(1)
					if failed.Load() == 1 {
						t.Errorf("goroutine %d: %v", g, err)
					}
				}
			}
		}()
	}
	wg.Wait()
	if ok.Load()+busy.Load() != 5000 || ok.Load() == 0 {
		t.Errorf("flood: %d answered, %d refused, %d failed; want all 5,000 answered or refused", ok.Load(), busy.Load(), failed.Load())
	}
	if peak := stop(); peak > limitsPeakHeapBytes {
		t.Errorf("peak heap %d MB; the stated bound is %d MB", peak>>20, limitsPeakHeapBytes>>20)
	} else {
		t.Logf("peak heap %d MB (bound %d MB); streams %d held, %d refused; flood %d answered, %d refused",
			peak>>20, limitsPeakHeapBytes>>20, held, refused.Load(), ok.Load(), busy.Load())
	}
}
