package service

import (
	"context"
	"net/http"
	"runtime/debug"
	"sync"
	"time"

	grpcprom "github.com/grpc-ecosystem/go-grpc-middleware/providers/prometheus"
	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"
	"google.golang.org/grpc"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/terms"
)

// metrics are the server's Prometheus metrics: per-RPC counts, status codes and latency
// (go-grpc-middleware's provider), the PostgreSQL pool, build information, the Go runtime,
// and the job's own counters, served in the Prometheus text format by MetricsHandler.
type metrics struct {
	reg      *prometheus.Registry
	rpc      *grpcprom.ServerMetrics
	records  *prometheus.CounterVec
	findings *prometheus.CounterVec
	// handshakes counts TLS handshakes refused, by listener (grpc, http) and kind
	// (handshakeKind).
	handshakes *prometheus.CounterVec
	// counters keeps the records and findings counters met (countVerdicts), so that a
	// verdict counted again finds its counter without writing and hashing its labels.
	counters counterCache
}

// counterCache holds the counters of countVerdicts by their labels' values (at most
// maxCachedCounters; beyond, the vector is asked each time).
type counterCache struct {
	mu       sync.RWMutex
	records  map[recordLabels]prometheus.Counter
	findings map[findingLabels]prometheus.Counter
}

type recordLabels struct {
	outcome  halovetv1.Outcome
	recorded bool
}

type findingLabels struct {
	code     string
	severity halovetv1.Severity
}

const maxCachedCounters = 4096

// recordCounter is records{outcome, recorded} for o and recorded.
func (m *metrics) recordCounter(o halovetv1.Outcome, recorded bool) prometheus.Counter {
	k := recordLabels{o, recorded}
	m.counters.mu.RLock()
	c, ok := m.counters.records[k]
	m.counters.mu.RUnlock()
	if ok {
		return c
	}
	rec := "false"
	if recorded {
		rec = "true"
	}
	c = m.records.WithLabelValues(enumLabel(o.String(), "OUTCOME_"), rec)
	m.counters.mu.Lock()
	if m.counters.records == nil {
		m.counters.records = map[recordLabels]prometheus.Counter{}
	}
	if len(m.counters.records) < maxCachedCounters {
		m.counters.records[k] = c
	}
	m.counters.mu.Unlock()
	return c
}

// findingCounter is findings{code, severity} for code and sev.
func (m *metrics) findingCounter(code string, sev halovetv1.Severity) prometheus.Counter {
	k := findingLabels{code, sev}
	m.counters.mu.RLock()
	c, ok := m.counters.findings[k]
	m.counters.mu.RUnlock()
	if ok {
		return c
	}
	c = m.findings.WithLabelValues(code, enumLabel(sev.String(), "SEVERITY_"))
	m.counters.mu.Lock()
	if m.counters.findings == nil {
		m.counters.findings = map[findingLabels]prometheus.Counter{}
	}
	if len(m.counters.findings) < maxCachedCounters {
		m.counters.findings[k] = c
	}
	m.counters.mu.Unlock()
	return c
}

// latencyBuckets are the RPC latency histogram's bounds in seconds: a unary check is
// expected in milliseconds, a report in well under a second, a recorded stream longer.
var latencyBuckets = []float64{0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30}

func newMetrics(st *store.Store, version, revision string) *metrics {
	m := &metrics{
		reg: prometheus.NewRegistry(),
		rpc: grpcprom.NewServerMetrics(grpcprom.WithServerHandlingTimeHistogram(grpcprom.WithHistogramBuckets(latencyBuckets))),
		records: prometheus.NewCounterVec(prometheus.CounterOpts{
			Namespace: "halovet", Name: "shipment_records_total",
			Help: "Shipment records answered, by outcome (accepted, accepted-with-warnings, rejected) and whether they were stored (recorded: true on a recording stream).",
		}, []string{"outcome", "recorded"}),
		findings: prometheus.NewCounterVec(prometheus.CounterOpts{
			Namespace: "halovet", Name: "shipment_findings_total",
			Help: "Findings on answered shipment records, by finding code and severity.",
		}, []string{"code", "severity"}),
		handshakes: prometheus.NewCounterVec(prometheus.CounterOpts{
			Namespace: "halovet", Name: "tls_handshake_refusals_total",
			Help: "TLS handshakes that failed before any call, by listener (grpc, http) and kind (client-certificate-unparsable, not-tls, closed-by-peer, timeout, refused-by-peer, no-common-parameters, other); each is logged with the peer address and the reason.",
		}, []string{"listener", "kind"}),
	}
	m.reg.MustRegister(m.rpc, m.records, m.findings, m.handshakes,
		collectors.NewGoCollector(),
		collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}),
		collectors.NewBuildInfoCollector(),
		versionCollector(version, revision),
		&poolCollector{st: st},
		&quotaCollector{st: st, now: time.Now},
	)
	return m
}

// MetricsHandler serves the server's metrics in the Prometheus text format (see metrics).
func (s *Server) MetricsHandler() http.Handler {
	return promhttp.HandlerFor(s.m.reg, promhttp.HandlerOpts{Registry: s.m.reg})
}

// countVerdicts counts the verdicts of an answer the server sends.
func (m *metrics) countVerdicts(msg any) {
	var vs []*halovetv1.Verdict
	switch r := msg.(type) {
	case *halovetv1.CheckShipmentResponse:
		m.countVerdict(r.GetVerdict()) // one verdict: no list
		return
	case *halovetv1.CheckShipmentsResponse:
		vs = append(vs, r.GetVerdict())
		vs = append(vs, r.GetVerdicts().GetVerdicts()...)
	case *halovetv1.RecordShipmentsResponse:
		vs = append(vs, r.GetVerdict())
		vs = append(vs, r.GetVerdicts().GetVerdicts()...)
	case *halovetv1.CheckShipmentBatchResponse:
		vs = r.GetVerdicts()
	case *halovetv1.RecordShipmentBatchResponse:
		vs = r.GetVerdicts()
	default:
		return
	}
	for _, v := range vs {
		m.countVerdict(v)
	}
}

// countVerdict counts one verdict (none for nil) and its findings.
func (m *metrics) countVerdict(v *halovetv1.Verdict) {
	if v == nil {
		return
	}
	m.recordCounter(v.GetOutcome(), v.GetRecorded()).Inc()
	for _, f := range v.GetFindings() {
		m.findingCounter(f.GetCode(), f.GetSeverity()).Inc()
	}
}

// unary and stream are the interceptors: RPC metrics, then the verdict counters on every
// answer sent.
func (m *metrics) unary() grpc.UnaryServerInterceptor {
	rpc := m.rpc.UnaryServerInterceptor()
	return func(ctx context.Context, req any, info *grpc.UnaryServerInfo, h grpc.UnaryHandler) (any, error) {
		resp, err := rpc(ctx, req, info, h)
		if err == nil {
			m.countVerdicts(resp)
		}
		return resp, err
	}
}

func (m *metrics) stream() grpc.StreamServerInterceptor {
	rpc := m.rpc.StreamServerInterceptor()
	return func(srv any, ss grpc.ServerStream, info *grpc.StreamServerInfo, h grpc.StreamHandler) error {
		return rpc(srv, &countingStream{ServerStream: ss, m: m}, info, h)
	}
}

type countingStream struct {
	grpc.ServerStream
	m *metrics
}

func (s *countingStream) SendMsg(msg any) error {
	err := s.ServerStream.SendMsg(msg)
	if err == nil {
		s.m.countVerdicts(msg)
	}
	return err
}

// buildVersion fills an empty version or revision from the binary's build information
// (the module version, the VCS revision the toolchain stamped), else "(devel)" and
// "unknown".
func buildVersion(version, revision string) (string, string) {
	if bi, ok := debug.ReadBuildInfo(); ok {
		if version == "" && bi.Main.Version != "" {
			version = bi.Main.Version
		}
		for _, s := range bi.Settings {
			if s.Key == "vcs.revision" && revision == "" {
				revision = s.Value
			}
		}
	}
	if version == "" {
		version = "(devel)"
	}
	if revision == "" {
		revision = "unknown"
	}
	return version, revision
}

// enumLabel is an enum value name as a label: lower case, hyphens, without its prefix.
func enumLabel(name, prefix string) string {
	b := []byte(name[min(len(prefix), len(name)):])
	for i, c := range b {
		switch {
		case c == '_':
			b[i] = '-'
		case c >= 'A' && c <= 'Z':
			b[i] = c + 'a' - 'A'
		}
	}
	return string(b)
}

// versionCollector is halovet_build_info{version, revision}: the running build (see
// Options.Version).
func versionCollector(version, revision string) prometheus.Collector {
	g := prometheus.NewGauge(prometheus.GaugeOpts{
		Namespace: "halovet", Name: "build_info", Help: "The running binary's module version and VCS revision (value 1).",
		ConstLabels: prometheus.Labels{"version": version, "revision": revision},
	})
	g.Set(1)
	return g
}

// poolCollector reports the PostgreSQL pool's statistics at each scrape.
type poolCollector struct{ st *store.Store }

var (
	poolConns    = prometheus.NewDesc("halovet_db_pool_connections", "PostgreSQL pool connections by state (acquired, idle, constructing) and the maximum (max).", []string{"state"}, nil)
	poolAcquires = prometheus.NewDesc("halovet_db_pool_acquires_total", "Connections acquired from the PostgreSQL pool, by kind (all, empty: had to wait or connect, canceled).", []string{"kind"}, nil)
	poolWait     = prometheus.NewDesc("halovet_db_pool_acquire_seconds_total", "Time spent acquiring connections from the PostgreSQL pool.", nil, nil)
)

func (c *poolCollector) Describe(ch chan<- *prometheus.Desc) {
	ch <- poolConns
	ch <- poolAcquires
	ch <- poolWait
}

func (c *poolCollector) Collect(ch chan<- prometheus.Metric) {
	s := c.st.Pool().Stat()
	ch <- prometheus.MustNewConstMetric(poolConns, prometheus.GaugeValue, float64(s.AcquiredConns()), "acquired")
	ch <- prometheus.MustNewConstMetric(poolConns, prometheus.GaugeValue, float64(s.IdleConns()), "idle")
	ch <- prometheus.MustNewConstMetric(poolConns, prometheus.GaugeValue, float64(s.ConstructingConns()), "constructing")
	ch <- prometheus.MustNewConstMetric(poolConns, prometheus.GaugeValue, float64(s.MaxConns()), "max")
	ch <- prometheus.MustNewConstMetric(poolAcquires, prometheus.CounterValue, float64(s.AcquireCount()), "all")
	ch <- prometheus.MustNewConstMetric(poolAcquires, prometheus.CounterValue, float64(s.EmptyAcquireCount()), "empty")
	ch <- prometheus.MustNewConstMetric(poolAcquires, prometheus.CounterValue, float64(s.CanceledAcquireCount()), "canceled")
	ch <- prometheus.MustNewConstMetric(poolWait, prometheus.CounterValue, s.AcquireDuration().Seconds())
}

// quotaCollector reports, at each scrape, the active licences' quota lines valid in the
// current year by the share of their allocation drawn.
type quotaCollector struct {
	st  *store.Store
	now func() time.Time
}

// quotaBands are the share-used bands of halovet_quota_lines, upper bounds in percent.
var quotaBands = []struct {
	label string
	below float64
}{{"under-50", 50}, {"50-80", 80}, {"80-95", 95}, {"95-100", 100}, {"exhausted", 1e300}}

var quotaLines = prometheus.NewDesc("halovet_quota_lines",
	"Quota lines of active licences valid this year, by the share of the allocation drawn (band of percent used; exhausted: 100 % or more).",
	[]string{"share_used"}, nil)

func (c *quotaCollector) Describe(ch chan<- *prometheus.Desc) { ch <- quotaLines }

func (c *quotaCollector) Collect(ch chan<- prometheus.Metric) {
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Second)
	defer cancel()
	ls, err := c.st.ListLicences(ctx, "", c.now().Year())
	if err != nil {
		ch <- prometheus.NewInvalidMetric(quotaLines, err)
		return
	}
	counts := make([]int, len(quotaBands))
	for _, l := range ls {
		if l.Status != terms.LicenceActive {
			continue
		}
		for _, q := range l.QuotaLines {
			pct := 100.0
			if q.Allocated.Sign() > 0 {
				pct = q.Drawn.Shift(2).DivRound(q.Allocated, 6).Float64() // a band of a gauge, not a figure
			}
			for i, b := range quotaBands {
				if pct < b.below {
					counts[i]++
					break
				}
			}
		}
	}
	for i, b := range quotaBands {
		ch <- prometheus.MustNewConstMetric(quotaLines, prometheus.GaugeValue, float64(counts[i]), b.label)
	}
}
