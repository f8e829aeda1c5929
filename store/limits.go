package store

import (
	"context"
	"strconv"
	"time"

	"github.com/jackc/pgx/v5/pgxpool"
	"go.opentelemetry.io/otel/trace"
)

// DefaultStatementTimeout is the longest one SQL statement of the pool may run before
// PostgreSQL cancels it (SQLSTATE 57014), unless OpenOptions say otherwise. The slowest
// statement of the recording path, one batch of rows, takes well under a second.
const DefaultStatementTimeout = 30 * time.Second

// OpenOptions tune the connection pool.
type OpenOptions struct {
	// StatementTimeout is set as PostgreSQL's statement_timeout on every connection of
	// the pool: 0 means DefaultStatementTimeout, a negative value none. A statement_timeout
	// given in the URL's options is kept.
	StatementTimeout time.Duration
	// TracerProvider, when set, gets a span of every statement, batch and COPY, as a
	// child of the caller's span (see queryTracer); nil: no tracing.
	TracerProvider trace.TracerProvider
}

// applyPoolLimits sets the pool's session limits, and its tracer when one is given.
func applyPoolLimits(cfg *pgxpool.Config, o OpenOptions) {
	if o.TracerProvider != nil {
		cfg.ConnConfig.Tracer = newQueryTracer(o.TracerProvider)
	}
	d := o.StatementTimeout
	if d == 0 {
		d = DefaultStatementTimeout
	}
	if d < 0 {
		return
	}
	if _, set := cfg.ConnConfig.RuntimeParams["statement_timeout"]; set {
		return
	}
	ms := d.Milliseconds()
	if ms < 1 {
		ms = 1
	}
	cfg.ConnConfig.RuntimeParams["statement_timeout"] = strconv.FormatInt(ms, 10)
}

// Open connects to the database at url with the default OpenOptions and checks that it
// answers.
func Open(ctx context.Context, url string) (*Store, error) {
	return OpenWith(ctx, url, OpenOptions{})
}
