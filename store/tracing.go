package store

import (
	"context"
	"strings"

	"github.com/jackc/pgx/v5"
	"go.opentelemetry.io/otel/attribute"
	"go.opentelemetry.io/otel/codes"
	"go.opentelemetry.io/otel/trace"
)

// queryTracer makes an OpenTelemetry span of every statement, batch and COPY the pool
// runs, a child of the span in the caller's context (the RPC's, under otelgrpc). It
// records the statement's text and its row count, never its arguments (they hold
// companies' declarations).
type queryTracer struct{ tr trace.Tracer }

// tracerName is the instrumentation scope of the store's spans.
const tracerName = "github.com/halovet/halovet/store"

func newQueryTracer(tp trace.TracerProvider) *queryTracer {
	return &queryTracer{tr: tp.Tracer(tracerName)}
}

var (
	_ pgx.QueryTracer    = (*queryTracer)(nil)
	_ pgx.BatchTracer    = (*queryTracer)(nil)
	_ pgx.CopyFromTracer = (*queryTracer)(nil)
)

var dbSystem = attribute.String("db.system.name", "postgresql")

// maxQueryText bounds the statement text kept on a span.
const maxQueryText = 2048

// operation is the statement's first word, upper case ("SELECT", "WITH"), the span's name.
func operation(sql string) string {
	sql = strings.TrimSpace(sql)
	for strings.HasPrefix(sql, "--") { // a leading comment line
		_, sql, _ = strings.Cut(sql, "\n")
		sql = strings.TrimSpace(sql)
	}
	op, _, _ := strings.Cut(sql, " ")
	op, _, _ = strings.Cut(op, "\n")
	if op == "" {
		return "SQL"
	}
	return strings.ToUpper(op)
}

func queryText(sql string) string {
	if len(sql) > maxQueryText {
		return sql[:maxQueryText] + "…"
	}
	return sql
}

func (q *queryTracer) TraceQueryStart(ctx context.Context, _ *pgx.Conn, d pgx.TraceQueryStartData) context.Context {
	op := operation(d.SQL)
	ctx, _ = q.tr.Start(ctx, op, trace.WithSpanKind(trace.SpanKindClient), trace.WithAttributes(
		dbSystem, attribute.String("db.operation.name", op), attribute.String("db.query.text", queryText(d.SQL))))
	return ctx
}

func (q *queryTracer) TraceQueryEnd(ctx context.Context, _ *pgx.Conn, d pgx.TraceQueryEndData) {
	end(trace.SpanFromContext(ctx), d.CommandTag.RowsAffected(), d.Err)
}

func (q *queryTracer) TraceBatchStart(ctx context.Context, _ *pgx.Conn, d pgx.TraceBatchStartData) context.Context {
	n := 0
	if d.Batch != nil {
		n = d.Batch.Len()
	}
	ctx, _ = q.tr.Start(ctx, "BATCH", trace.WithSpanKind(trace.SpanKindClient), trace.WithAttributes(
		dbSystem, attribute.String("db.operation.name", "BATCH"), attribute.Int("db.operation.batch.size", n)))
	return ctx
}

func (q *queryTracer) TraceBatchQuery(ctx context.Context, _ *pgx.Conn, d pgx.TraceBatchQueryData) {
	if d.Err != nil {
		trace.SpanFromContext(ctx).RecordError(d.Err)
	}
}

func (q *queryTracer) TraceBatchEnd(ctx context.Context, _ *pgx.Conn, d pgx.TraceBatchEndData) {
	end(trace.SpanFromContext(ctx), -1, d.Err)
}

func (q *queryTracer) TraceCopyFromStart(ctx context.Context, _ *pgx.Conn, d pgx.TraceCopyFromStartData) context.Context {
	ctx, _ = q.tr.Start(ctx, "COPY", trace.WithSpanKind(trace.SpanKindClient), trace.WithAttributes(
		dbSystem, attribute.String("db.operation.name", "COPY"), attribute.String("db.collection.name", d.TableName.Sanitize())))
	return ctx
}

func (q *queryTracer) TraceCopyFromEnd(ctx context.Context, _ *pgx.Conn, d pgx.TraceCopyFromEndData) {
	end(trace.SpanFromContext(ctx), d.CommandTag.RowsAffected(), d.Err)
}

func end(span trace.Span, rows int64, err error) {
	if rows >= 0 {
		span.SetAttributes(attribute.Int64("db.response.returned_rows", rows))
	}
	if err != nil {
		span.RecordError(err)
		span.SetStatus(codes.Error, err.Error())
	}
	span.End()
}
