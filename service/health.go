package service

import (
	"context"
	"time"

	healthpb "google.golang.org/grpc/health/grpc_health_v1"
)

// LivenessService is the health service name that reports SERVING for as long as the
// process runs and is not shutting down, whatever the database's state: a liveness probe
// asks for it, so that a database outage takes replicas out of load balancing (readiness,
// the overall status) without restarting them all.
const LivenessService = "liveness"

func (s *Server) setHealth(st healthpb.HealthCheckResponse_ServingStatus) {
	s.health.SetServingStatus("", st)
	for _, name := range serviceNames {
		s.health.SetServingStatus(name, st)
	}
}

// probeHealth reports SERVING only while the database answers and its schema is one this
// binary serves (store.SchemaState.Serves: not behind the binary, and not marked as too new
// for it); it re-probes every HealthInterval. A schema newer than the binary's is served, so
// that old replicas stay ready while a rolling upgrade migrates the database.
func (s *Server) probeHealth(ctx context.Context) {
	last := healthpb.HealthCheckResponse_UNKNOWN
	t := time.NewTicker(s.opts.HealthInterval)
	defer t.Stop()
	for {
		st := s.probeOnce(ctx)
		if ctx.Err() != nil {
			return
		}
		if st != last {
			s.log.Info("health", "status", st.String())
			s.setHealth(st)
			last = st
		}
		select {
		case <-ctx.Done():
			return
		case <-t.C:
		}
	}
}

func (s *Server) probeOnce(ctx context.Context) healthpb.HealthCheckResponse_ServingStatus {
	pctx, cancel := context.WithTimeout(ctx, 2*time.Second)
	defer cancel()
	if err := s.store.Ping(pctx); err != nil {
		s.log.Warn("health: database does not answer", "err", err)
		return healthpb.HealthCheckResponse_NOT_SERVING
	}
	st, err := s.store.SchemaState(pctx)
	if err != nil {
		s.log.Warn("health: schema version unknown", "err", err)
		return healthpb.HealthCheckResponse_NOT_SERVING
	}
	if ok, why := st.Serves(); !ok {
		s.log.Warn("health: cannot serve on this schema", "current", st.Current, "head", st.Head, "reason", why)
		return healthpb.HealthCheckResponse_NOT_SERVING
	}
	if st.Current > st.Head && !s.newerSchemaLogged.Swap(true) {
		s.log.Info("health: the database schema is newer than this server's and compatible with it",
			"current", st.Current, "head", st.Head)
	}
	return healthpb.HealthCheckResponse_SERVING
}
