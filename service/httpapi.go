package service

import (
	"context"
	"crypto/tls"
	"errors"
	"fmt"
	"net"
	"net/http"
	"time"

	"connectrpc.com/vanguard"
	"connectrpc.com/vanguard/vanguardgrpc"

	"github.com/halovet/halovet/proto/openapi"
)

// HTTPHandler serves the API to callers that do not speak gRPC, through the same handlers,
// interceptors and verdicts as the gRPC port:
//   - HTTP/JSON on the paths of the google.api.http annotations in proto/ (for example
//     POST /v1/shipments:check, GET /v1/licences/{licence_number}); errors carry the HTTP
//     status of their gRPC code and a google.rpc.Status JSON body with the same details;
//   - gRPC-Web and the Connect protocol at /halovet.v1.SERVICE/METHOD, for browsers;
//   - the OpenAPI document of the HTTP/JSON paths at GET /openapi.json;
//   - the handlers given to Mount (the console, under /console/).
//
// The transcoding is connectrpc.com/vanguard's over the registered grpc-go services: no
// second set of handlers and no generated gateway code to keep in step.
func (s *Server) HTTPHandler() (http.Handler, error) {
	tc, err := vanguardgrpc.NewTranscoder(s.grpc, vanguard.WithUnknownHandler(http.HandlerFunc(notFound)))
	if err != nil {
		return nil, fmt.Errorf("HTTP/JSON transcoder: %w", err)
	}
	mux := http.NewServeMux()
	mux.HandleFunc("GET /openapi.json", func(w http.ResponseWriter, _ *http.Request) {
		w.Header().Set("Content-Type", "application/json")
		_, _ = w.Write(openapi.Document)
	})
	for _, m := range s.mounts {
		mux.Handle(m.prefix, m.h)
	}
	mux.Handle("/", tc)
	return mux, nil
}

func notFound(w http.ResponseWriter, r *http.Request) {
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(http.StatusNotFound)
	_, _ = fmt.Fprintf(w, `{"code":5,"message":%q}`+"\n",
		fmt.Sprintf("no halovet call at %s %s; the paths are listed in GET /openapi.json", r.Method, r.URL.Path))
}

// ServeHTTPAPI serves HTTPHandler on lis until ctx is done, then shuts down, giving calls
// in flight the grace period. With tlsConfig it serves HTTPS (TLSFiles.Config: the
// certificate reloaded when its files change, client certificates requested as on the gRPC
// listener). It returns nil after a clean shutdown.
func (s *Server) ServeHTTPAPI(ctx context.Context, lis net.Listener, tlsConfig *tls.Config) error {
	h, err := s.HTTPHandler()
	if err != nil {
		return err
	}
	// Bodies are bounded by the gRPC message limits the calls go through; the connection
	// itself by these: headers in 10 s and 64 KiB, a request read in the unary deadline, an
	// idle keep-alive connection closed after the idle limit.
	hs := &http.Server{
		Handler:           h,
		ReadHeaderTimeout: 10 * time.Second,
		MaxHeaderBytes:    64 << 10,
		ReadTimeout:       s.limits.UnaryDeadline,
		IdleTimeout:       s.limits.ConnIdle,
		ErrorLog:          s.httpErrorLog(), // refused TLS handshakes logged and counted
	}
	if tlsConfig != nil {
		hs.TLSConfig = tlsConfig.Clone()
		hs.TLSConfig.NextProtos = []string{"h2", "http/1.1"}
	}
	done := make(chan error, 1)
	go func() {
		if tlsConfig != nil {
			done <- hs.ServeTLS(lis, "", "")
		} else {
			done <- hs.Serve(lis)
		}
	}()
	s.log.Info("HTTP/JSON and gRPC-Web listening", "addr", lis.Addr().String())
	select {
	case err := <-done:
		return fmt.Errorf("HTTP listener: %w", err)
	case <-ctx.Done():
	}
	sctx, cancel := context.WithTimeout(context.WithoutCancel(ctx), s.opts.GracePeriod)
	defer cancel()
	if err := hs.Shutdown(sctx); err != nil {
		_ = hs.Close()
	}
	if err := <-done; err != nil && !errors.Is(err, http.ErrServerClosed) {
		return err
	}
	return nil
}
