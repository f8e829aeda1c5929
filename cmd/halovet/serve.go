package main

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/http"
	"os"
	"strings"
	"time"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"
	"google.golang.org/grpc/credentials"

	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

func init() {
	addVerb("serve", "run the gRPC server", serveUsage, defineServe)
	addVerb("migrate", "apply the database schema migrations and exit", migrateUsage, defineMigrate)
}

const serveUsage = `serve [flags]

Runs the gRPC API (catalogue, shipments, licensing, consumption, analysis) with the
standard grpc.health.v1 health service and server reflection on --listen, and the same
calls over HTTP/JSON (paths in GET /openapi.json) and gRPC-Web on --http-listen. Without --database-url it runs a
private PostgreSQL cluster in --data-dir from the machine's PostgreSQL server binaries
and stops it on exit. SIGINT or SIGTERM shut down gracefully: health turns NOT_SERVING,
calls in flight get --grace-period to finish.

` + tracingHelp

func defineServe(fs *pflag.FlagSet) runFunc {
	var d dbFlags
	d.register(fs)
	listen := fs.String("listen", envOr("HALOVET_LISTEN", "127.0.0.1:7390"), "address of the gRPC API (env HALOVET_LISTEN)")
	metricsListen := fs.String("metrics-listen", envOr("HALOVET_METRICS_LISTEN", ""), "address of the Prometheus metrics (GET /metrics); empty: none (env HALOVET_METRICS_LISTEN)")
	httpListen := fs.String("http-listen", envOr("HALOVET_HTTP_LISTEN", "127.0.0.1:7391"), "address of the HTTP/JSON and gRPC-Web API and of GET /openapi.json; empty: none (env HALOVET_HTTP_LISTEN)")
	migrate := fs.Bool("migrate", envBool("HALOVET_MIGRATE"), "apply pending migrations before serving (env HALOVET_MIGRATE)")
	grace := fs.Duration("grace-period", envDuration("HALOVET_GRACE_PERIOD", 20*time.Second), "time in-flight calls get to finish on shutdown (env HALOVET_GRACE_PERIOD)")
	logFormat := fs.String("log-format", envOr("HALOVET_LOG_FORMAT", "text"), "log format: text or json (env HALOVET_LOG_FORMAT)")
	logLevel := fs.String("log-level", envOr("HALOVET_LOG_LEVEL", "info"), "log level: debug, info, warn, error (env HALOVET_LOG_LEVEL)")
	certFile := fs.String("tls-cert", envOr("HALOVET_TLS_CERT", ""), "PEM certificate chain to serve TLS with (env HALOVET_TLS_CERT); with --tls-key")
	keyFile := fs.String("tls-key", envOr("HALOVET_TLS_KEY", ""), "PEM private key of --tls-cert (env HALOVET_TLS_KEY)")
	tokenFile := fs.String("admin-token-file", envOr("HALOVET_ADMIN_TOKEN_FILE", ""), "file holding the bearer token that calls changing data must carry; empty: no token needed (env HALOVET_ADMIN_TOKEN_FILE)")
	limits := serveLimitFlags(fs)
	fs.DurationVar(&d.statementTimeout, "statement-timeout", envDuration("HALOVET_STATEMENT_TIMEOUT", store.DefaultStatementTimeout), "longest one SQL statement may run before PostgreSQL cancels it; negative: none (env HALOVET_STATEMENT_TIMEOUT)")
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		log, err := newLogger(*logFormat, *logLevel)
		if err != nil {
			return err
		}
		var token string
		if *tokenFile != "" {
			b, err := os.ReadFile(*tokenFile)
			if err != nil {
				return fmt.Errorf("--admin-token-file: %w", err)
			}
			token = strings.TrimSpace(string(b))
		}
		var serverOpts []grpc.ServerOption
		switch {
		case *certFile != "" && *keyFile != "":
			creds, err := credentials.NewServerTLSFromFile(*certFile, *keyFile)
			if err != nil {
				return fmt.Errorf("--tls-cert/--tls-key: %w", err)
			}
			serverOpts = append(serverOpts, grpc.Creds(creds))
		case *certFile != "" || *keyFile != "":
			return usageErr("--tls-cert and --tls-key go together")
		}
		lis, err := net.Listen("tcp", *listen)
		if err != nil {
			return fmt.Errorf("--listen %s: %w", *listen, err)
		}
		defer lis.Close()
		var httpLis, metricsLis net.Listener
		if *metricsListen != "" {
			if metricsLis, err = net.Listen("tcp", *metricsListen); err != nil {
				return fmt.Errorf("--metrics-listen %s: %w", *metricsListen, err)
			}
			defer metricsLis.Close()
		}
		if *httpListen != "" {
			if httpLis, err = net.Listen("tcp", *httpListen); err != nil {
				return fmt.Errorf("--http-listen %s: %w", *httpListen, err)
			}
			defer httpLis.Close()
		}

		tp, stopTracing, err := startTracing(ctx, log)
		if err != nil {
			return err
		}
		defer func() {
			// Flush the spans still buffered; a collector that is gone costs at most 5 s.
			flushCtx, cancel := context.WithTimeout(context.WithoutCancel(ctx), 5*time.Second)
			defer cancel()
			if err := stopTracing(flushCtx); err != nil {
				log.Warn("flushing traces", "err", err)
			}
		}()
		d.tracerProvider = tp
		db, err := openDatabase(ctx, d, *migrate, log)
		if err != nil {
			return err
		}
		defer db.Close()
		st, err := db.Store.SchemaState(ctx)
		if err != nil {
			return fmt.Errorf("reading the schema version: %w", err)
		}
		if ok, why := st.Serves(); !ok {
			return errors.New(why)
		}
		if st.Current > st.Head {
			log.Info("the database schema is newer than this server's and compatible with it", "current", st.Current, "head", st.Head)
		}
		cat, err := service.LoadCatalogue(ctx, db.Store, log)
		if err != nil {
			return err
		}
		stopWatch := cat.Watch(ctx, db.Store)
		defer stopWatch()
		srv := service.New(db.Store, cat, service.Options{GracePeriod: *grace, Logger: log, AdminToken: token, ServerOptions: serverOpts, Limits: limits(),
			Version: versionString(), Revision: commitString(), TracerProvider: tp})
		// The listeners stop together: when one fails, the others are shut down too.
		ctx, stop := context.WithCancel(ctx)
		defer stop()
		var side []chan error
		if httpLis != nil {
			done := make(chan error, 1)
			go func() { done <- srv.ServeHTTPAPI(ctx, httpLis, *certFile, *keyFile); stop() }()
			side = append(side, done)
		}
		if metricsLis != nil {
			done := make(chan error, 1)
			go func() { done <- serveMetrics(ctx, metricsLis, srv.MetricsHandler(), log); stop() }()
			side = append(side, done)
		}
		err = srv.Serve(ctx, lis)
		stop()
		for _, done := range side {
			err = errors.Join(err, <-done)
		}
		return err
	}
}

const migrateUsage = `migrate [flags]

Applies every pending schema migration to the database and prints the version reached.
Safe to run from several replicas at once: an advisory lock serialises them.`

func defineMigrate(fs *pflag.FlagSet) runFunc {
	var d dbFlags
	d.register(fs)
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		log, err := newLogger(envOr("HALOVET_LOG_FORMAT", "text"), envOr("HALOVET_LOG_LEVEL", "warn"))
		if err != nil {
			return err
		}
		db, err := openDatabase(ctx, d, true, log)
		if err != nil {
			return err
		}
		defer db.Close()
		cur, head, err := db.Store.SchemaVersion(ctx)
		if err != nil {
			return err
		}
		fmt.Printf("schema at version %d (newest %d)\n", cur, head)
		return nil
	}
}

// serveMetrics serves GET /metrics on lis until ctx is done. The metrics listener is apart
// from the API's so that it can stay inside the cluster network while the API is exposed.
func serveMetrics(ctx context.Context, lis net.Listener, h http.Handler, log *slog.Logger) error {
	mux := http.NewServeMux()
	mux.Handle("GET /metrics", h)
	hs := &http.Server{Handler: mux, ReadHeaderTimeout: 10 * time.Second}
	done := make(chan error, 1)
	go func() { done <- hs.Serve(lis) }()
	log.Info("metrics listening", "addr", lis.Addr().String())
	select {
	case err := <-done:
		return fmt.Errorf("metrics listener: %w", err)
	case <-ctx.Done():
	}
	sctx, cancel := context.WithTimeout(context.WithoutCancel(ctx), 5*time.Second)
	defer cancel()
	_ = hs.Shutdown(sctx)
	if err := <-done; err != nil && !errors.Is(err, http.ErrServerClosed) {
		return err
	}
	return nil
}
