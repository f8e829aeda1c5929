package main

import (
	"context"
	"crypto/tls"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/http"
	"os"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/console"
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
calls over HTTP/JSON (paths in GET /openapi.json) and gRPC-Web on --http-listen, with
the web console under /console/ (the catalogue, the licence register, shipment batches
and the year; sign-in with a credential's secret). Without --database-url it runs a
private PostgreSQL cluster in --data-dir from the machine's PostgreSQL server binaries
and stops it on exit. SIGINT or SIGTERM shut down gracefully: health turns NOT_SERVING,
calls in flight get --grace-period to finish.

Access: every call but health and reflection needs an identity: a credential halovet
issued ('halovet credentials issue'; the first officer's straight against the database
with --database-url, or --bootstrap-credential-file), with --tls-client-ca a client
certificate whose subject --tls-client-map maps to a role, or with --oidc-issuer an
OpenID Connect bearer token whose claims name the role (and a trader's company). --open-access turns that off
(every call acts as the officer "open-access"): loopback addresses only, unless
--open-access-on-network is given too; the server then warns at start and lists
` + "`" + service.OpenAccessHealthName + "`" + ` in its health.

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
	bootstrapFile := fs.String("bootstrap-credential-file", envOr("HALOVET_BOOTSTRAP_CREDENTIAL_FILE", ""), "file holding an officer credential secret ('halovet credentials new-secret' makes one) stored at start as the officer \"bootstrap-officer\" unless already there; an empty or unreadable file stops the server (env HALOVET_BOOTSTRAP_CREDENTIAL_FILE)")
	clientCA := fs.String("tls-client-ca", envOr("HALOVET_TLS_CLIENT_CA", ""), "PEM file of the CAs whose client certificates identify callers (mutual TLS, with --tls-cert and --tls-client-map); reloaded when it changes (env HALOVET_TLS_CLIENT_CA)")
	clientMap := fs.String("tls-client-map", envOr("HALOVET_TLS_CLIENT_MAP", ""), "JSON file mapping client certificate subjects to identities: [{\"subject\": \"CN=gw,O=Customs\", \"name\": \"customs-gateway\", \"role\": \"customs\", \"company_id\": \"\"}]; reloaded when it changes (env HALOVET_TLS_CLIENT_MAP)")
	oidcIssuer := fs.String("oidc-issuer", envOr("HALOVET_OIDC_ISSUER", ""), "accept OpenID Connect bearer tokens of this issuer URL (with --oidc-audience); its keys by discovery unless --oidc-jwks-url (env HALOVET_OIDC_ISSUER)")
	oidcAudience := fs.String("oidc-audience", envOr("HALOVET_OIDC_AUDIENCE", ""), "the audience (aud) tokens must carry: halovet's client id at the issuer (env HALOVET_OIDC_AUDIENCE)")
	oidcJWKS := fs.String("oidc-jwks-url", envOr("HALOVET_OIDC_JWKS_URL", ""), "the issuer's key set URL, instead of discovery (env HALOVET_OIDC_JWKS_URL)")
	oidcRole := fs.String("oidc-role-claim", envOr("HALOVET_OIDC_ROLE_CLAIM", "halovet_role"), "claim holding the halovet role (env HALOVET_OIDC_ROLE_CLAIM)")
	oidcCompany := fs.String("oidc-company-claim", envOr("HALOVET_OIDC_COMPANY_CLAIM", "halovet_company"), "claim holding a trader's company (env HALOVET_OIDC_COMPANY_CLAIM)")
	consoleOn := fs.Bool("console", envBoolDefault("HALOVET_CONSOLE", true), "serve the web console under /console/ on --http-listen; sign-in with a credential's secret (env HALOVET_CONSOLE)")
	openAccess := fs.Bool("open-access", envBool("HALOVET_OPEN_ACCESS"), "no authentication: every call acts as the officer \"open-access\"; loopback addresses only (env HALOVET_OPEN_ACCESS)")
	openOnNetwork := fs.Bool("open-access-on-network", envBool("HALOVET_OPEN_ACCESS_ON_NETWORK"), "allow --open-access on a non-loopback address: anyone who reaches the port may change the register (env HALOVET_OPEN_ACCESS_ON_NETWORK)")
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
		// Access before anything is opened: a bad configuration stops the server here.
		var bootstrap string
		if *bootstrapFile != "" {
			b, err := os.ReadFile(*bootstrapFile)
			if err != nil {
				return usageErr("--bootstrap-credential-file: %v", err)
			}
			bootstrap = strings.TrimSpace(string(b))
			if bootstrap == "" {
				return usageErr("--bootstrap-credential-file %s is empty: it must hold a secret from 'halovet credentials new-secret'", *bootstrapFile)
			}
			if _, err := access.ParseSecret(bootstrap); err != nil {
				return usageErr("--bootstrap-credential-file %s: %v", *bootstrapFile, err)
			}
		}
		if *openAccess && (bootstrap != "" || *clientCA != "" || *oidcIssuer != "") {
			return usageErr("--open-access turns authentication off; it cannot go with --bootstrap-credential-file, --tls-client-ca or --oidc-issuer")
		}
		if (*oidcIssuer == "") != (*oidcAudience == "") {
			return usageErr("--oidc-issuer and --oidc-audience go together")
		}
		if *openAccess && !*openOnNetwork {
			for _, a := range []struct{ flag, addr string }{{"--listen", *listen}, {"--http-listen", *httpListen}} {
				if a.addr != "" && !loopbackListen(a.addr) {
					return usageErr("%s %s is not a loopback address and --open-access turns authentication off: anyone reaching it could change the register. Issue credentials instead ('halovet credentials issue --database-url ... --role officer'), listen on 127.0.0.1, or add --open-access-on-network to accept the risk", a.flag, a.addr)
				}
			}
		}
		if (*clientCA != "" || *clientMap != "") && (*certFile == "" || *clientCA == "" || *clientMap == "") {
			return usageErr("mutual TLS needs --tls-cert, --tls-key, --tls-client-ca and --tls-client-map together")
		}
		var tlsFiles *service.TLSFiles
		switch {
		case *certFile != "" && *keyFile != "":
			tlsFiles, err = service.NewTLSFiles(*certFile, *keyFile, *clientCA, *clientMap, log)
			if err != nil {
				return usageErr("%v", err)
			}
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
		if bootstrap != "" {
			if err := ensureBootstrap(ctx, db.Store, bootstrap, log); err != nil {
				return err
			}
		}
		opts := service.Options{GracePeriod: *grace, Logger: log, OpenAccess: *openAccess, Limits: limits(),
			Version: versionString(), Revision: commitString(), TracerProvider: tp}
		if *oidcIssuer != "" {
			v, err := access.NewTokenVerifier(ctx, access.TokenOptions{Issuer: *oidcIssuer, Audience: *oidcAudience,
				JWKSURL: *oidcJWKS, RoleClaim: *oidcRole, CompanyClaim: *oidcCompany})
			if err != nil {
				return fmt.Errorf("--oidc-issuer: %w", err)
			}
			opts.TokenVerifier = v
		}
		if tlsFiles != nil {
			// Handshakes the listener refuses are logged with the peer and counted.
			opts.TLS = tlsFiles.Config()
		}
		if tlsFiles != nil && *clientCA != "" {
			opts.ClientCAs, opts.CertIdentities = tlsFiles.ClientCAs, tlsFiles.CertIdentities
		}
		if *openAccess {
			log.Warn("serving with --open-access: no authentication, every call acts as the officer \"open-access\"")
		} else {
			if n, err := db.Store.CountActiveCredentials(ctx); err == nil && n == 0 && *clientCA == "" && *oidcIssuer == "" {
				log.Warn("no active credential: only health and reflection answer; issue the first officer's with 'halovet credentials issue --database-url URL --role officer --name NAME'")
			}
			if tlsFiles == nil && !loopbackListen(*listen) {
				log.Warn("listening beyond loopback without TLS: credentials cross the network in plaintext; give --tls-cert and --tls-key, or terminate TLS in front of the server", "listen", *listen)
			}
		}
		srv := service.New(db.Store, cat, opts)
		// The listeners stop together: when one fails, the others are shut down too.
		ctx, stop := context.WithCancel(ctx)
		defer stop()
		var side []chan error
		if httpLis != nil && *consoleOn {
			closeConsole, err := mountConsole(srv, db.Store, *openAccess, log)
			if err != nil {
				return err
			}
			defer closeConsole()
		}
		if httpLis != nil {
			done := make(chan error, 1)
			var httpTLS *tls.Config
			if tlsFiles != nil {
				httpTLS = tlsFiles.Config() // the same reloaded certificate and client CAs as --listen
			}
			go func() { done <- srv.ServeHTTPAPI(ctx, httpLis, httpTLS); stop() }()
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

// loopbackListen reports whether a listen address is on loopback only (an empty or
// wildcard host is every interface, not loopback).
func loopbackListen(addr string) bool {
	host, _, err := net.SplitHostPort(addr)
	if err != nil {
		return false
	}
	return isLoopbackHost(host)
}

// ensureBootstrap stores the bootstrap officer credential unless it is there already.
func ensureBootstrap(ctx context.Context, st *store.Store, secret string, log *slog.Logger) error {
	id, err := access.ParseSecret(secret)
	if err != nil {
		return err
	}
	c, created, err := st.EnsureCredential(ctx, id, access.HashSecret(secret),
		store.NewCredential{Name: "bootstrap-officer", Role: access.RoleOfficer})
	if err != nil {
		return fmt.Errorf("--bootstrap-credential-file: %w", err)
	}
	switch {
	case created:
		log.Info("bootstrap officer credential stored", "credential_id", id)
	case !c.RevokedAt.IsZero():
		log.Warn("the bootstrap credential was revoked; it stays revoked", "credential_id", id)
	}
	return nil
}

const migrateUsage = `migrate [flags]

Applies every pending schema migration to the database and prints the version reached.
Safe to run from several replicas at once: an advisory lock serialises them.`

func defineMigrate(fs *pflag.FlagSet) runFunc {
	var d dbFlags
	d.register(fs)
	return func(ctx context.Context, args []string) error {
		db, err := openForVerb(ctx, d, args, true)
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

// mountConsole mounts the web console on the HTTP listener. Its pages call the server in
// process, each call carrying the signed-in identity's own secret, so the server applies
// the same policy (and the same company limits) as to any other caller. Sign-in checks the
// secret against the stored credentials. With --open-access there are no credentials to
// sign in with, and the console is not mounted.
func mountConsole(srv *service.Server, st *store.Store, openAccess bool, log *slog.Logger) (func(), error) {
	if openAccess {
		log.Info("console off: with --open-access there are no credentials to sign in with")
		return func() {}, nil
	}
	conn, err := srv.InProcessConn()
	if err != nil {
		return nil, err
	}
	con, err := console.New(console.Config{Conn: conn, Auth: console.AccessAuthenticator{A: access.NewAuthenticator(st, access.AuthOptions{})},
		Policy: console.AccessPolicy{}, CallContext: console.BearerCallContext, Logger: log})
	if err != nil {
		_ = conn.Close()
		return nil, err
	}
	srv.Mount(console.Prefix, con)
	log.Info("console mounted", "path", console.Prefix)
	return func() { _ = conn.Close() }, nil
}
