package service

import (
	"context"
	"crypto/tls"
	"errors"
	"io"
	"log"
	"log/slog"
	"net"
	"strings"
	"sync/atomic"
	"syscall"
	"time"

	"google.golang.org/grpc/credentials"
)

// A TLS handshake that fails ends before any call exists: no interceptor sees it, and the
// caller gets a TLS alert, not a status with a reason. In particular a client certificate
// whose DER does not parse (truncated, damaged) is refused inside crypto/tls, which parses
// every certificate the client sends before anything of the server's can look at it and
// needs the parsed public key to check the client's CertificateVerify signature; there is
// no hook that lets the handshake complete with such a certificate. What the server can
// do is say so: every refused handshake is logged with the peer's address and the reason,
// and counted in halovet_tls_handshake_refusals_total by listener and kind.

// handshakeKind sorts a handshake error into the few kinds the metric counts.
func handshakeKind(err error) string {
	msg := err.Error()
	switch {
	case strings.Contains(msg, "failed to parse client certificate"):
		return "client-certificate-unparsable"
	case strings.Contains(msg, "client sent certificate containing RSA key larger"):
		return "client-certificate-key-too-large"
	case strings.Contains(msg, "first record does not look like a TLS handshake"),
		strings.Contains(msg, "client sent an HTTP request to an HTTPS server"):
		return "not-tls"
	case errors.Is(err, io.EOF), errors.Is(err, syscall.ECONNRESET), errors.Is(err, net.ErrClosed),
		msg == "EOF", strings.HasSuffix(msg, ": EOF"), strings.Contains(msg, "connection reset by peer"):
		return "closed-by-peer"
	case strings.Contains(msg, "timeout"), strings.Contains(msg, "deadline exceeded"):
		return "timeout"
	case strings.Contains(msg, "remote error: "):
		return "refused-by-peer"
	case strings.Contains(msg, "no cipher suite"), strings.Contains(msg, "protocol version"),
		strings.Contains(msg, "no application protocol"):
		return "no-common-parameters"
	}
	return "other"
}

// handshakeRefused logs and counts one refused handshake.
func (s *Server) handshakeRefused(listener, peer string, err error) {
	kind := handshakeKind(err)
	s.m.handshakes.WithLabelValues(listener, kind).Inc()
	level := slog.LevelWarn
	if kind == "closed-by-peer" {
		// Load balancers' and probes' TCP checks connect and close: not worth a warning.
		level = slog.LevelDebug
	}
	s.log.Log(context.Background(), level, "TLS handshake refused", "listener", listener, "peer", peer, "kind", kind, "reason", err.Error())
}

// watchedCreds are TLS transport credentials whose failed server handshakes are logged
// and counted (handshakeRefused).
type watchedCreds struct {
	credentials.TransportCredentials
	srv *Server
}

func (w watchedCreds) ServerHandshake(raw net.Conn) (net.Conn, credentials.AuthInfo, error) {
	// grpc-go closes the connection as soon as its handshake fails; the close is held
	// back until the client had the alert (lingerForAlert).
	held := &heldConn{Conn: raw}
	held.holding.Store(true)
	conn, info, err := w.TransportCredentials.ServerHandshake(held)
	held.holding.Store(false)
	if err != nil {
		w.srv.handshakeRefused("grpc", raw.RemoteAddr().String(), err)
		lingerForAlert(raw)
		_ = raw.Close()
	}
	return conn, info, err
}

// heldConn is a connection whose Close does nothing while holding.
type heldConn struct {
	net.Conn
	holding atomic.Bool
}

// SyscallConn keeps the connection's socket reachable (grpc-go's channelz reads its
// options through it).
func (h *heldConn) SyscallConn() (syscall.RawConn, error) {
	if sc, ok := h.Conn.(syscall.Conn); ok {
		return sc.SyscallConn()
	}
	return nil, errors.New("not a socket")
}

func (h *heldConn) Close() error {
	if h.holding.Load() {
		return nil
	}
	return h.Conn.Close()
}

// lingerForAlert gives a refused client the TLS alert crypto/tls sent: closed at once,
// with the client's first bytes unread, the connection would be reset and the client
// would see "broken pipe" or "connection reset" instead of, say, "remote error: tls:
// error decoding message". So the write side is closed (the alert, then end of stream)
// and what the client still sends is read and dropped until it closes, for at most a
// second.
func lingerForAlert(raw net.Conn) {
	tcp, ok := raw.(*net.TCPConn)
	if !ok {
		return
	}
	_ = tcp.CloseWrite()
	_ = tcp.SetReadDeadline(time.Now().Add(time.Second))
	_, _ = io.Copy(io.Discard, io.LimitReader(tcp, 1<<20))
}

func (w watchedCreds) Clone() credentials.TransportCredentials {
	return watchedCreds{TransportCredentials: w.TransportCredentials.Clone(), srv: w.srv}
}

// grpcCreds are the gRPC listener's credentials for cfg.
func (s *Server) grpcCreds(cfg *tls.Config) credentials.TransportCredentials {
	return watchedCreds{TransportCredentials: credentials.NewTLS(cfg), srv: s}
}

// httpErrorLog is the HTTP server's error log: net/http reports a failed TLS handshake as
// "http: TLS handshake error from ADDR: REASON" there (the only place it does), which is
// logged and counted as on the gRPC listener; every other line is logged as a warning.
func (s *Server) httpErrorLog() *log.Logger {
	return log.New(httpErrorWriter{s: s}, "", 0)
}

type httpErrorWriter struct{ s *Server }

func (w httpErrorWriter) Write(p []byte) (int, error) {
	line := strings.TrimSpace(string(p))
	if rest, ok := strings.CutPrefix(line, "http: TLS handshake error from "); ok {
		if peer, reason, ok := strings.Cut(rest, ": "); ok {
			w.s.handshakeRefused("http", peer, errors.New(reason))
			return len(p), nil
		}
	}
	w.s.log.Warn(line, "listener", "http")
	return len(p), nil
}
