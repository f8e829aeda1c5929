package service

import (
	"context"
	"crypto/tls"
	"crypto/x509"
	"errors"
	"log/slog"
	"net"
	"sort"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"go.opentelemetry.io/contrib/instrumentation/google.golang.org/grpc/otelgrpc"
	"go.opentelemetry.io/otel/propagation"
	"go.opentelemetry.io/otel/trace"
	"google.golang.org/grpc"
	"google.golang.org/grpc/health"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
	"google.golang.org/grpc/stats"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// Options configure a Server.
type Options struct {
	// GracePeriod bounds how long in-flight calls may run after shutdown begins.
	GracePeriod time.Duration
	// HealthInterval is how often the database and schema are probed for health.
	HealthInterval time.Duration
	// Logger receives structured logs; nil means slog.Default().
	Logger *slog.Logger
	// OpenAccess turns authentication off: every call runs as the officer "open-access"
	// (audited under that name). For a laptop or a test on loopback only; halovet serve
	// refuses it on another address unless told --open-access-on-network.
	OpenAccess bool
	// Authenticator checks presented credential secrets; nil means one over the store
	// with access.AuthOptions' defaults (a revocation is seen within 1 s).
	Authenticator *access.Authenticator
	// TokenVerifier, when not nil, accepts OpenID Connect bearer tokens of its issuer.
	TokenVerifier *access.TokenVerifier
	// ClientCAs, when not nil, returns the CAs client certificates are verified against
	// (called per call, so that a reloaded file takes effect); a verified certificate's
	// subject is looked up in CertIdentities.
	ClientCAs func() *x509.CertPool
	// CertIdentities maps a client certificate's subject (pkix.Name.String(), e.g.
	// "CN=gateway,O=Invented Customs") to the identity it acts as; nil returns none.
	CertIdentities func() map[string]access.Identity
	// Now is the clock; nil means time.Now.
	Now func() time.Time
	// TLS, when not nil, is the gRPC listener's TLS configuration (TLSFiles.Config); a
	// handshake it refuses is logged with the peer's address and reason and counted in
	// halovet_tls_handshake_refusals_total. Pass it to ServeHTTPAPI for the HTTP listener.
	TLS *tls.Config
	// ServerOptions are passed to grpc.NewServer after halovet's own (e.g. TLS credentials
	// without the refusal log of TLS).
	ServerOptions []grpc.ServerOption
	// Limits bound messages, calls, streams and connections; zero fields take DefaultLimits.
	Limits Limits
	// Version and Revision name the running build (the module version and the commit it
	// was built from): logged at start, in the halovet_build_info metric, and in the
	// VersionHeader of every answer, health checks included. Empty: read from the
	// binary's build information, else "(devel)" and "unknown".
	Version, Revision string
	// TracerProvider, when set, traces every call (otelgrpc: one server span per RPC,
	// W3C trace context taken from the caller); give the store the same provider
	// (store.OpenOptions) for a child span per query. Nil: no tracing.
	TracerProvider trace.TracerProvider
}

// OpenAccessHealthName is the health service name listed (SERVING) by a server running
// with open access, so that Health/List shows that authentication is off.
const OpenAccessHealthName = "halovet.warning.open-access"

// Server is halovet's gRPC server.
type Server struct {
	opts     Options
	log      *slog.Logger
	store    *store.Store
	grpc     *grpc.Server
	health   *health.Server
	cat      *CatalogueHolder
	m        *metrics
	env      *ledger.EnvHolder   // the check environment, rebuilt on every announced register change
	cons     *ledger.Consumption // consumption, baselines, compliance and quota planning
	figures  *ledger.Figures     // the reporting Party's national entries and year figures
	ships    *ledger.Shipments   // the shipment workflows
	limits   Limits
	inFlight *limiter
	auth     *access.Authenticator
	pages    pageSigner // signs and checks page tokens (pagetoken.go)

	mounts   []mount // handlers beside the HTTP/JSON API (Mount)
	inProcMu sync.Mutex
	inProc   *grpc.Server // serves InProcessConn; built on first use

	newerSchemaLogged atomic.Bool // the health probe said once that the schema is newer
}

// serviceNames lists the services whose health is reported one by one.
var serviceNames = []string{
	halovetv1.CatalogueService_ServiceDesc.ServiceName,
	halovetv1.ShipmentService_ServiceDesc.ServiceName,
	halovetv1.LicensingService_ServiceDesc.ServiceName,
	halovetv1.ConsumptionService_ServiceDesc.ServiceName,
	halovetv1.AccessService_ServiceDesc.ServiceName,
}

// New builds a server on an open store. The catalogue holder must already hold a
// snapshot (see LoadCatalogue).
func New(st *store.Store, cat *CatalogueHolder, opts Options) *Server {
	if opts.Logger == nil {
		opts.Logger = slog.Default()
	}
	if opts.GracePeriod <= 0 {
		opts.GracePeriod = 20 * time.Second
	}
	if opts.HealthInterval <= 0 {
		opts.HealthInterval = 2 * time.Second
	}
	if opts.Now == nil {
		opts.Now = time.Now
	}
	opts.Version, opts.Revision = buildVersion(opts.Version, opts.Revision)
	s := &Server{opts: opts, log: opts.Logger, store: st, health: health.NewServer(), cat: cat, m: newMetrics(st, opts.Version, opts.Revision)}
	s.env = ledger.NewEnvHolder(registerSource{st}, ledger.Options{Catalogue: cat.Load, Now: opts.Now, Logger: opts.Logger})
	s.cons = ledger.NewConsumption(reportSource{st: st, today: s.today}, ledger.ConsumptionOptions{Catalogue: cat.Load, Drafts: reportSource{st: st, today: s.today}, Now: opts.Now})
	s.figures = ledger.NewFigures(s.cons, figureWriter{st})
	s.ships = ledger.NewShipments(s.env, shipmentRegister{st}, verdictCodec{}, ledger.ShipmentOptions{FlushSize: recordFlushSize, Logger: opts.Logger})
	s.auth = opts.Authenticator
	if s.auth == nil {
		s.auth = access.NewAuthenticator(st, access.AuthOptions{Now: opts.Now})
	}
	s.limits = opts.Limits.withDefaults()
	s.inFlight = newLimiter(s.limits.MaxInFlight)
	s.grpc = s.newGRPC(opts.ServerOptions)
	s.setHealth(healthpb.HealthCheckResponse_NOT_SERVING)
	if opts.OpenAccess {
		// A warning anyone can read in grpc.health.v1.Health/List: this server has no
		// authentication.
		s.health.SetServingStatus(OpenAccessHealthName, healthpb.HealthCheckResponse_SERVING)
		s.log.Warn("open access: authentication is off, every call acts as the officer \"open-access\"")
	}
	s.health.SetServingStatus(LivenessService, healthpb.HealthCheckResponse_SERVING)
	return s
}

// Methods lists the full names ("/package.Service/Method") of every method the gRPC
// server registers, from its service info; the access tests hold them against the
// policy table.
func (s *Server) Methods() []string {
	var out []string
	for name, info := range s.grpc.GetServiceInfo() {
		for _, m := range info.Methods {
			out = append(out, "/"+name+"/"+m.Name)
		}
	}
	sort.Strings(out)
	return out
}

// newGRPC builds a gRPC server with halovet's interceptors, limits and services, and the
// extra options after them (TLS credentials for the network listener).
func (s *Server) newGRPC(extra []grpc.ServerOption) *grpc.Server {
	// Metrics come first, so that they see every call and the status it ends with; then
	// the check that the request decoded (before anything can refuse the call), the
	// chain of interceptors.go, and the limits last, so that refused calls are logged.
	unary := append(append([]grpc.UnaryServerInterceptor{s.m.unary(), checkDecodedUnary}, s.unaryInterceptors()...), s.limitUnary)
	stream := append(append([]grpc.StreamServerInterceptor{s.m.stream()}, s.streamInterceptors()...), s.limitStream)
	own := []grpc.ServerOption{
		grpc.ChainUnaryInterceptor(unary...),
		grpc.ChainStreamInterceptor(stream...),
		grpc.NumStreamWorkers(streamWorkers),
	}
	if s.opts.TracerProvider != nil {
		own = append(own, grpc.StatsHandler(otelgrpc.NewServerHandler(
			otelgrpc.WithTracerProvider(s.opts.TracerProvider),
			otelgrpc.WithPropagators(propagation.NewCompositeTextMapPropagator(propagation.TraceContext{}, propagation.Baggage{})),
			// The health checks of probes and balancers every few seconds are noise.
			otelgrpc.WithFilter(func(info *stats.RPCTagInfo) bool { return !strings.HasPrefix(info.FullMethodName, "/grpc.health.v1.") }),
		)))
	}
	if s.opts.TLS != nil {
		own = append(own, grpc.Creds(s.grpcCreds(s.opts.TLS)))
	}
	g := grpc.NewServer(append(append(own, s.limits.serverOptions()...), extra...)...)
	healthpb.RegisterHealthServer(g, s.health)
	if err := registerReflection(g); err != nil {
		s.log.Error("reflection answers without documentation", "err", err)
	}
	halovetv1.RegisterCatalogueServiceServer(g, &catalogueServer{srv: s})
	halovetv1.RegisterShipmentServiceServer(g, &shipmentServer{srv: s})
	halovetv1.RegisterLicensingServiceServer(g, &licensingServer{srv: s})
	halovetv1.RegisterConsumptionServiceServer(g, &consumptionServer{srv: s})
	halovetv1.RegisterAnalysisServiceServer(g, &analysisServer{srv: s})
	halovetv1.RegisterAccessServiceServer(g, &accessServer{srv: s})
	s.m.rpc.InitializeMetrics(g)
	return g
}

// Serve accepts calls on lis until ctx is done, then shuts down gracefully: health turns
// NOT_SERVING, in-flight calls get the grace period to finish, and what is left is cut.
// It returns nil after a clean shutdown.
func (s *Server) Serve(ctx context.Context, lis net.Listener) error {
	probeCtx, stopProbe := context.WithCancel(context.Background())
	defer stopProbe()
	go s.probeHealth(probeCtx)
	// The check environment follows the register's announcements until the last call has
	// finished, and is rebuilt whole each time the listener (re)connects.
	stopEnvWatch := s.env.Watch(context.Background(), registerSource{s.store})
	defer stopEnvWatch()

	errc := make(chan error, 1)
	go func() { errc <- s.grpc.Serve(lis) }()
	s.log.Info("serving", "listen", lis.Addr().String(), "version", s.opts.Version, "revision", s.opts.Revision)

	select {
	case err := <-errc:
		if errors.Is(err, grpc.ErrServerStopped) {
			return nil
		}
		return err
	case <-ctx.Done():
	}
	stopProbe()
	s.health.Shutdown() // every service NOT_SERVING from here on
	s.log.Info("shutting down", "grace_period", s.opts.GracePeriod.String())
	done := make(chan struct{})
	go func() {
		s.grpc.GracefulStop()
		if in := s.inProcess(); in != nil {
			in.GracefulStop()
		}
		close(done)
	}()
	select {
	case <-done:
		s.log.Info("all calls finished")
	case <-time.After(s.opts.GracePeriod):
		s.log.Warn("grace period over; cutting the calls left")
		s.grpc.Stop()
		if in := s.inProcess(); in != nil {
			in.Stop()
		}
		<-done
	}
	if err := <-errc; err != nil && !errors.Is(err, grpc.ErrServerStopped) {
		return err
	}
	return nil
}

// streamWorkers is how many goroutines grpc keeps to run calls on (grpc.NumStreamWorkers);
// a call that finds none idle runs on a goroutine of its own, as every call did before.
// A worker's stack stays grown between calls: a new goroutine per call starts with a
// small stack and copies it as the interceptors, the handler and the check call deeper,
// which took about a tenth of the server's CPU time under load.
const streamWorkers = 128
