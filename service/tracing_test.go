package service_test

import (
	"context"
	"errors"
	"net"
	"strings"
	"testing"
	"time"

	sdktrace "go.opentelemetry.io/otel/sdk/trace"
	"go.opentelemetry.io/otel/sdk/trace/tracetest"
	"go.opentelemetry.io/otel/trace"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/credentials/insecure"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
	"google.golang.org/grpc/metadata"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

// TestTracesSpanPerRPCWithChildSpanPerQuery runs a server and its store on one tracer
// provider with an in-memory exporter: a call makes one server span, named for the
// method, continuing the caller's W3C trace context, with a child span for the query it
// ran; the statement's text is on the child, its arguments are not; health checks make
// no span.
func TestTracesSpanPerRPCWithChildSpanPerQuery(t *testing.T) {
	t.Parallel()
	exp := tracetest.NewInMemoryExporter()
	tp := sdktrace.NewTracerProvider(sdktrace.WithSyncer(exp))
	t.Cleanup(func() { _ = tp.Shutdown(context.Background()) })
	ctx := context.Background()
	url := pgtest.NewDatabase(t, "halovet_service", migrateServiceDB)
	st, err := store.OpenWith(ctx, url, store.OpenOptions{TracerProvider: tp})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(st.Close)
	holder, err := service.LoadCatalogue(ctx, st, quietLogger())
	if err != nil {
		t.Fatal(err)
	}
	srv := service.New(st, holder, service.Options{Logger: quietLogger(), GracePeriod: 5 * time.Second, TracerProvider: tp, OpenAccess: true})
	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	serveCtx, cancel := context.WithCancel(ctx)
	served := make(chan error, 1)
	go func() { served <- srv.Serve(serveCtx, lis) }()
	t.Cleanup(func() {
		cancel()
		if err := <-served; err != nil && !errors.Is(err, net.ErrClosed) {
			t.Errorf("Serve: %v", err)
		}
	})
	conn, err := grpc.NewClient(lis.Addr().String(), grpc.WithTransportCredentials(insecure.NewCredentials()))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = conn.Close() })

	if _, err := healthpb.NewHealthClient(conn).Check(ctx, &healthpb.HealthCheckRequest{}); err != nil {
		t.Fatal(err)
	}
	exp.Reset() // the spans of loading the catalogue at start
	const traceID = "4bf92f3577b34da6a3ce929d0e0e4736"
	callCtx := metadata.AppendToOutgoingContext(ctx, "traceparent", "00-"+traceID+"-00f067aa0ba902b7-01")
	if _, err := halovetv1.NewLicensingServiceClient(conn).GetParty(callCtx, &halovetv1.GetPartyRequest{CountryCode: "QZ"}); status.Code(err) != codes.NotFound {
		t.Fatalf("GetParty of an unknown country: %v; want NotFound", err)
	}
	if _, err := healthpb.NewHealthClient(conn).Check(ctx, &healthpb.HealthCheckRequest{}); err != nil {
		t.Fatal(err)
	}

	// The server ends its span after it has sent the status, so the answer can reach the
	// client before the span reaches the exporter: wait for it, within a bound.
	var spans tracetest.SpanStubs
	for deadline := time.Now().Add(5 * time.Second); ; time.Sleep(10 * time.Millisecond) {
		spans = exp.GetSpans()
		if hasSpan(spans, "halovet.v1.LicensingService/GetParty") || time.Now().After(deadline) {
			break
		}
	}
	var rpc *tracetest.SpanStub
	for i := range spans {
		if strings.HasPrefix(spans[i].Name, "grpc.health") {
			t.Errorf("a health check made span %s", spans[i].Name)
		}
		if spans[i].Name == "halovet.v1.LicensingService/GetParty" {
			if rpc != nil {
				t.Errorf("two spans for one call")
			}
			rpc = &spans[i]
		}
	}
	if rpc == nil {
		t.Fatalf("no span for the call among %d: %v", len(spans), names(spans))
	}
	if rpc.SpanKind != trace.SpanKindServer || rpc.SpanContext.TraceID().String() != traceID {
		t.Errorf("call span kind %v trace %s; want a server span in the caller's trace %s", rpc.SpanKind, rpc.SpanContext.TraceID(), traceID)
	}
	var queries int
	for _, s := range spans {
		if s.Parent.SpanID() != rpc.SpanContext.SpanID() {
			continue
		}
		queries++
		attrs := map[string]string{}
		for _, a := range s.Attributes {
			attrs[string(a.Key)] = a.Value.String()
		}
		if s.SpanKind != trace.SpanKindClient || s.Name != "SELECT" || attrs["db.system.name"] != "postgresql" || !strings.Contains(attrs["db.query.text"], "parties") {
			t.Errorf("child span %s kind %v attributes %v; want a SELECT on parties, client kind, db.system.name postgresql", s.Name, s.SpanKind, attrs)
		}
		if strings.Contains(strings.Join(mapValues(attrs), " "), "QZ") {
			t.Errorf("child span %s carries the query's argument: %v", s.Name, attrs)
		}
	}
	if queries == 0 {
		t.Errorf("the call span has no child query span; spans: %v", names(spans))
	}
}

func hasSpan(spans tracetest.SpanStubs, name string) bool {
	for _, s := range spans {
		if s.Name == name {
			return true
		}
	}
	return false
}

func names(spans tracetest.SpanStubs) []string {
	var out []string
	for _, s := range spans {
		out = append(out, s.Name)
	}
	return out
}

func mapValues(m map[string]string) []string {
	var out []string
	for _, v := range m {
		out = append(out, v)
	}
	return out
}
