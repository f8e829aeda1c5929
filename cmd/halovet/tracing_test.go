package main

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync"
	"testing"
)

// TestPlanTracing: traces are exported only when the standard OTEL_* environment asks for
// them (an OTLP endpoint given), over the protocol it names; values halovet cannot honour
// are refused naming the variable and what is accepted.
func TestPlanTracing(t *testing.T) {
	cases := []struct {
		name     string
		env      map[string]string
		enabled  bool
		protocol string
		err      string
	}{
		{"nothing set: off", nil, false, "", ""},
		{"endpoint: on, http/protobuf by default", map[string]string{"OTEL_EXPORTER_OTLP_ENDPOINT": "http://collector:4318"}, true, "http/protobuf", ""},
		{"traces endpoint alone", map[string]string{"OTEL_EXPORTER_OTLP_TRACES_ENDPOINT": "http://c:4318/v1/traces"}, true, "http/protobuf", ""},
		{"grpc protocol", map[string]string{"OTEL_EXPORTER_OTLP_ENDPOINT": "http://c:4317", "OTEL_EXPORTER_OTLP_PROTOCOL": "grpc"}, true, "grpc", ""},
		{"traces protocol wins", map[string]string{"OTEL_EXPORTER_OTLP_ENDPOINT": "http://c:4317", "OTEL_EXPORTER_OTLP_PROTOCOL": "http/protobuf", "OTEL_EXPORTER_OTLP_TRACES_PROTOCOL": "grpc"}, true, "grpc", ""},
		{"exporter otlp", map[string]string{"OTEL_TRACES_EXPORTER": "otlp", "OTEL_EXPORTER_OTLP_ENDPOINT": "http://c:4318"}, true, "http/protobuf", ""},
		{"exporter none", map[string]string{"OTEL_TRACES_EXPORTER": "none", "OTEL_EXPORTER_OTLP_ENDPOINT": "http://c:4318"}, false, "", ""},
		{"sdk disabled", map[string]string{"OTEL_SDK_DISABLED": "true", "OTEL_EXPORTER_OTLP_ENDPOINT": "http://c:4318"}, false, "", ""},
		{"exporter otlp without endpoint", map[string]string{"OTEL_TRACES_EXPORTER": "otlp"}, false, "", ""},
		{"exporter zipkin refused", map[string]string{"OTEL_TRACES_EXPORTER": "zipkin"}, false, "", "OTEL_TRACES_EXPORTER"},
		{"http/json refused", map[string]string{"OTEL_EXPORTER_OTLP_ENDPOINT": "http://c:4318", "OTEL_EXPORTER_OTLP_PROTOCOL": "http/json"}, false, "", "accepted: grpc, http/protobuf"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			p, err := planTracing(func(k string) string { return tc.env[k] })
			if tc.err != "" {
				if err == nil || !strings.Contains(err.Error(), tc.err) {
					t.Fatalf("error %v; want one naming %q", err, tc.err)
				}
				return
			}
			if err != nil || p.enabled != tc.enabled || p.protocol != tc.protocol {
				t.Errorf("plan %+v, %v; want enabled %t protocol %q", p, err, tc.enabled, tc.protocol)
			}
			if !p.enabled && p.why == "" {
				t.Errorf("tracing off without saying why")
			}
		})
	}
}

// TestTracingExportsOverOTLPHTTP points the standard environment at a local HTTP receiver:
// a span made through the provider reaches it as an OTLP protobuf POST to /v1/traces when
// the provider is shut down (flushed), carrying the service name.
func TestTracingExportsOverOTLPHTTP(t *testing.T) {
	var mu sync.Mutex
	var got []string
	recv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		b, _ := io.ReadAll(r.Body)
		mu.Lock()
		got = append(got, r.Method+" "+r.URL.Path+" "+r.Header.Get("Content-Type")+" "+string(b))
		mu.Unlock()
		w.Header().Set("Content-Type", "application/x-protobuf")
	}))
	defer recv.Close()
	t.Setenv("OTEL_EXPORTER_OTLP_ENDPOINT", recv.URL)
	t.Setenv("OTEL_SERVICE_NAME", "halovet-test")
	tp, stop, err := startTracing(context.Background(), slog.New(slog.DiscardHandler))
	if err != nil || tp == nil {
		t.Fatalf("startTracing: %v, provider %v; want tracing on", err, tp)
	}
	_, span := tp.Tracer("test").Start(context.Background(), "a-test-span")
	span.End()
	if err := stop(context.Background()); err != nil {
		t.Fatal(err)
	}
	mu.Lock()
	defer mu.Unlock()
	if len(got) == 0 {
		t.Fatal("the receiver got nothing")
	}
	all := strings.Join(got, "\n")
	if !strings.HasPrefix(got[0], "POST /v1/traces application/x-protobuf") || !strings.Contains(all, "a-test-span") || !strings.Contains(all, "halovet-test") {
		t.Errorf("receiver got %q; want a protobuf POST to /v1/traces with the span and OTEL_SERVICE_NAME", all)
	}
}
