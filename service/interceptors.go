package service

import (
	"context"
	"crypto/rand"
	"crypto/subtle"
	"encoding/hex"
	"log/slog"
	"runtime/debug"
	"strings"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/metadata"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/callctx"
)

// The interceptor chain, in order: recovery; the call (request id, caller and logger
// put into the context once, see newCall) and its log line; auth.
func (s *Server) unaryInterceptors() []grpc.UnaryServerInterceptor {
	return []grpc.UnaryServerInterceptor{s.recoverUnary, s.logUnary, s.authUnary}
}

func (s *Server) streamInterceptors() []grpc.StreamServerInterceptor {
	return []grpc.StreamServerInterceptor{s.recoverStream, s.logStream, s.authStream}
}

func (s *Server) recoverUnary(ctx context.Context, req any, info *grpc.UnaryServerInfo, h grpc.UnaryHandler) (resp any, err error) {
	defer func() {
		if r := recover(); r != nil {
			s.log.Error("panic in handler", "method", info.FullMethod, "panic", r, "stack", string(debug.Stack()))
			err = status.Error(codes.Internal, "internal error; the server log has the details")
		}
	}()
	return h(ctx, req)
}

func (s *Server) recoverStream(srv any, ss grpc.ServerStream, info *grpc.StreamServerInfo, h grpc.StreamHandler) (err error) {
	defer func() {
		if r := recover(); r != nil {
			s.log.Error("panic in stream handler", "method", info.FullMethod, "panic", r, "stack", string(debug.Stack()))
			err = status.Error(codes.Internal, "internal error; the server log has the details")
		}
	}()
	return h(srv, ss)
}

// requestIDHeader carries the request id both ways: a caller may send one (it is kept
// when it is 1 to 128 characters of letters, digits and ._:-), and every answer's
// header carries the one the call ran under.
const requestIDHeader = "x-request-id"

// VersionHeader is the response header naming the server's build, "VERSION REVISION"
// (Options.Version), on every answer; `halovet probe` prints it.
const VersionHeader = "halovet-version"

// requestID returns the caller's x-request-id when it is acceptable, or a new one.
func requestID(ctx context.Context) string {
	if md, ok := metadata.FromIncomingContext(ctx); ok {
		if v := md.Get(requestIDHeader); len(v) > 0 && validRequestID(v[0]) {
			return v[0]
		}
	}
	var b [8]byte
	_, _ = rand.Read(b[:])
	return hex.EncodeToString(b[:])
}

func validRequestID(id string) bool {
	if id == "" || len(id) > 128 {
		return false
	}
	for _, r := range id {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', strings.ContainsRune("._:-", r):
		default:
			return false
		}
	}
	return true
}

// adminSubject is the caller's subject for a call that carries the configured admin
// token: the one identity the server knows until there are credentials per person.
const adminSubject = "admin"

// caller is the identity behind a call as far as the server knows it: the holder of the
// admin token when one is configured and the call carries it, else anonymous.
func (s *Server) caller(ctx context.Context) callctx.Caller {
	if s.opts.AdminToken == "" || !s.hasAdminToken(ctx) {
		return callctx.Caller{}
	}
	return callctx.Caller{Subject: adminSubject, Roles: []string{"admin"}, Via: "token"}
}

// newCall is what the interceptors put into a call's context, once: the request id the
// caller gets back in the response header, the caller, and a logger naming both.
func (s *Server) newCall(ctx context.Context, method string) *callctx.Call {
	c := &callctx.Call{RequestID: requestID(ctx), Method: method, Caller: s.caller(ctx)}
	who := c.Caller.Subject
	if who == "" {
		who = "anonymous"
	}
	c.Logger = s.log.With("request_id", c.RequestID, "method", method, "caller", who)
	return c
}

func (s *Server) logUnary(ctx context.Context, req any, info *grpc.UnaryServerInfo, h grpc.UnaryHandler) (any, error) {
	start := time.Now()
	c := s.newCall(ctx, info.FullMethod)
	ctx = callctx.With(ctx, c)
	_ = grpc.SetHeader(ctx, metadata.Pairs(requestIDHeader, c.RequestID, VersionHeader, s.versionText()))
	resp, err := h(ctx, req)
	logCall(ctx, c, start, err)
	return resp, err
}

// callStream is a server stream whose context carries the call.
type callStream struct {
	grpc.ServerStream
	ctx context.Context
}

func (cs *callStream) Context() context.Context { return cs.ctx }

func (s *Server) logStream(srv any, ss grpc.ServerStream, info *grpc.StreamServerInfo, h grpc.StreamHandler) error {
	start := time.Now()
	c := s.newCall(ss.Context(), info.FullMethod)
	ctx := callctx.With(ss.Context(), c)
	_ = ss.SetHeader(metadata.Pairs(requestIDHeader, c.RequestID, VersionHeader, s.versionText()))
	err := h(srv, &callStream{ServerStream: ss, ctx: ctx})
	logCall(ctx, c, start, err)
	return err
}

func (s *Server) versionText() string { return s.opts.Version + " " + s.opts.Revision }

func logCall(ctx context.Context, c *callctx.Call, start time.Time, err error) {
	code := status.Code(err)
	level := slog.LevelInfo
	if code == codes.Internal || code == codes.Unavailable || code == codes.DataLoss {
		level = slog.LevelError
	}
	c.Logger.Log(ctx, level, "call", "code", code.String(), "duration_ms", time.Since(start).Milliseconds())
}

// adminMethods change the catalogue, licensing or the register's recorded shipments; when an admin token is configured
// they need "authorization: Bearer <token>".
func isAdminMethod(full string) bool {
	switch full {
	case "/halovet.v1.CatalogueService/UpsertSubstance",
		"/halovet.v1.ConsumptionService/RecordNationalEntries",
		// an officer's changes to the register of recorded shipments
		"/halovet.v1.ShipmentService/VoidShipment",
		"/halovet.v1.ShipmentService/CorrectShipment",
		"/halovet.v1.ShipmentService/CloseYear",
		"/halovet.v1.ShipmentService/ReopenYear":
		return true
	}
	if strings.HasPrefix(full, "/halovet.v1.LicensingService/") {
		m := strings.TrimPrefix(full, "/halovet.v1.LicensingService/")
		return !strings.HasPrefix(m, "Get") && !strings.HasPrefix(m, "List")
	}
	return false
}

func (s *Server) authorize(ctx context.Context, method string) error {
	if !isAdminMethod(method) {
		return nil
	}
	return s.requireAdmin(ctx)
}

// requireAdmin checks the admin token, when one is configured. The interceptor calls it
// for the administrative methods; handlers call it for calls that change data only
// with some arguments (PlanQuotas with issue_drafts).
func (s *Server) requireAdmin(ctx context.Context) error {
	if s.opts.AdminToken == "" {
		return nil
	}
	md, _ := metadata.FromIncomingContext(ctx)
	if len(md.Get("authorization")) == 0 {
		return status.Error(codes.Unauthenticated, "this call changes data and needs 'authorization: Bearer <admin token>'")
	}
	if !s.hasAdminToken(ctx) {
		return status.Error(codes.PermissionDenied, "the admin token is not valid")
	}
	return nil
}

// hasAdminToken reports whether the call carries "authorization: Bearer <admin token>"
// with the configured token (false when none is configured).
func (s *Server) hasAdminToken(ctx context.Context) bool {
	if s.opts.AdminToken == "" {
		return false
	}
	md, _ := metadata.FromIncomingContext(ctx)
	vals := md.Get("authorization")
	if len(vals) == 0 {
		return false
	}
	tok, ok := strings.CutPrefix(vals[0], "Bearer ")
	return ok && subtle.ConstantTimeCompare([]byte(tok), []byte(s.opts.AdminToken)) == 1
}

func (s *Server) authUnary(ctx context.Context, req any, info *grpc.UnaryServerInfo, h grpc.UnaryHandler) (any, error) {
	if err := s.authorize(ctx, info.FullMethod); err != nil {
		return nil, err
	}
	return h(ctx, req)
}

func (s *Server) authStream(srv any, ss grpc.ServerStream, info *grpc.StreamServerInfo, h grpc.StreamHandler) error {
	if err := s.authorize(ss.Context(), info.FullMethod); err != nil {
		return err
	}
	return h(srv, ss)
}
