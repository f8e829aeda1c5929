package main

import (
	"context"
	"fmt"
	"log/slog"
	"os"
	"strings"

	"go.opentelemetry.io/otel"
	"go.opentelemetry.io/otel/exporters/otlp/otlptrace/otlptracegrpc"
	"go.opentelemetry.io/otel/exporters/otlp/otlptrace/otlptracehttp"
	"go.opentelemetry.io/otel/propagation"
	"go.opentelemetry.io/otel/sdk/resource"
	sdktrace "go.opentelemetry.io/otel/sdk/trace"
	semconv "go.opentelemetry.io/otel/semconv/v1.43.0"
	"go.opentelemetry.io/otel/trace"
)

// tracingHelp is the part of serve's help about traces.
const tracingHelp = `Traces: OpenTelemetry spans of every call and of every SQL statement it runs (the
statement's text, never its arguments), exported over OTLP only when the standard
environment asks for it: OTEL_EXPORTER_OTLP_ENDPOINT or OTEL_EXPORTER_OTLP_TRACES_ENDPOINT
set, OTEL_TRACES_EXPORTER unset or "otlp", OTEL_SDK_DISABLED not "true". The protocol is
OTEL_EXPORTER_OTLP_TRACES_PROTOCOL or OTEL_EXPORTER_OTLP_PROTOCOL: "grpc", or
"http/protobuf" (the default); headers, TLS, timeouts and sampling (OTEL_TRACES_SAMPLER)
follow the other standard OTEL_* variables, OTEL_SERVICE_NAME names the service (default
halovet). Otherwise no span is made.`

// tracingPlan is what the OTEL_* environment asks for: nothing (enabled false, why says
// why), or OTLP over protocol.
type tracingPlan struct {
	enabled  bool
	protocol string // "grpc" or "http/protobuf"
	why      string
}

// planTracing reads the standard OpenTelemetry environment (getenv: os.Getenv).
func planTracing(getenv func(string) string) (tracingPlan, error) {
	if strings.EqualFold(strings.TrimSpace(getenv("OTEL_SDK_DISABLED")), "true") {
		return tracingPlan{why: "OTEL_SDK_DISABLED is true"}, nil
	}
	switch e := strings.TrimSpace(getenv("OTEL_TRACES_EXPORTER")); e {
	case "", "otlp":
	case "none":
		return tracingPlan{why: "OTEL_TRACES_EXPORTER is none"}, nil
	default:
		return tracingPlan{}, usageErr("OTEL_TRACES_EXPORTER %q: halovet exports traces over OTLP only; accepted: otlp, none", e)
	}
	if getenv("OTEL_EXPORTER_OTLP_ENDPOINT") == "" && getenv("OTEL_EXPORTER_OTLP_TRACES_ENDPOINT") == "" {
		return tracingPlan{why: "no OTEL_EXPORTER_OTLP_ENDPOINT or OTEL_EXPORTER_OTLP_TRACES_ENDPOINT"}, nil
	}
	p := strings.TrimSpace(getenv("OTEL_EXPORTER_OTLP_TRACES_PROTOCOL"))
	if p == "" {
		p = strings.TrimSpace(getenv("OTEL_EXPORTER_OTLP_PROTOCOL"))
	}
	switch p {
	case "", "http/protobuf":
		p = "http/protobuf"
	case "grpc":
	default:
		return tracingPlan{}, usageErr("OTEL_EXPORTER_OTLP_(TRACES_)PROTOCOL %q: accepted: grpc, http/protobuf", p)
	}
	return tracingPlan{enabled: true, protocol: p}, nil
}

// startTracing returns the tracer provider the environment asks for (nil when tracing is
// off) and the function that flushes and stops it.
func startTracing(ctx context.Context, log *slog.Logger) (trace.TracerProvider, func(context.Context) error, error) {
	plan, err := planTracing(os.Getenv)
	if err != nil {
		return nil, nil, err
	}
	if !plan.enabled {
		log.Debug("tracing off", "why", plan.why)
		return nil, func(context.Context) error { return nil }, nil
	}
	var exp sdktrace.SpanExporter
	if plan.protocol == "grpc" {
		exp, err = otlptracegrpc.New(ctx)
	} else {
		exp, err = otlptracehttp.New(ctx)
	}
	if err != nil {
		return nil, nil, fmt.Errorf("OTLP trace exporter (%s): %w", plan.protocol, err)
	}
	// Later detectors win: OTEL_SERVICE_NAME and OTEL_RESOURCE_ATTRIBUTES over the defaults.
	res, err := resource.New(ctx,
		resource.WithAttributes(semconv.ServiceName("halovet"), semconv.ServiceVersion(versionString())),
		resource.WithTelemetrySDK(), resource.WithFromEnv())
	if err != nil {
		return nil, nil, fmt.Errorf("trace resource: %w", err)
	}
	tp := sdktrace.NewTracerProvider(sdktrace.WithBatcher(exp), sdktrace.WithResource(res))
	otel.SetTextMapPropagator(propagation.NewCompositeTextMapPropagator(propagation.TraceContext{}, propagation.Baggage{}))
	log.Info("tracing on", "exporter", "otlp", "protocol", plan.protocol)
	return tp, tp.Shutdown, nil
}
