package service

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"log/slog"
	"runtime/debug"
	"strconv"
	"strings"
	"time"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/metadata"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/callctx"
)

// The interceptor chain, in order: recovery; the call (request id, caller and logger
// put into the context once, see newCall) and its log line; the access check (authorize).
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

// identify establishes who is behind a call, from what the transport proves and never
// from anything else the caller sends: a halovet credential in "authorization: Bearer
// <secret>" (or an OpenID Connect token of the configured issuer), else a client certificate verified against --tls-client-ca and mapped to an
// identity, else (a server run with open access) the open-access officer, else nobody.
// A credential or certificate presented and refused is an error with the reason:
// the call is refused Unauthenticated before any handler runs.
func (s *Server) identify(ctx context.Context) (callctx.Caller, error) {
	md, _ := metadata.FromIncomingContext(ctx)
	if vals := md.Get("authorization"); len(vals) > 0 {
		if len(vals) > 1 {
			return callctx.Caller{}, status.Error(codes.Unauthenticated, "the call carries more than one authorization header; send one")
		}
		secret, ok := strings.CutPrefix(vals[0], "Bearer ")
		if !ok {
			return callctx.Caller{}, status.Error(codes.Unauthenticated, "the authorization header must be 'Bearer <credential secret>'")
		}
		secret = strings.TrimSpace(secret)
		if access.LooksLikeToken(secret) {
			if s.opts.TokenVerifier == nil {
				return callctx.Caller{}, status.Error(codes.Unauthenticated, "the bearer value is a JWT, and this server takes no OpenID Connect tokens (serve --oidc-issuer); send a halovet credential secret")
			}
			id, err := s.opts.TokenVerifier.Verify(ctx, secret)
			if err != nil {
				return callctx.Caller{}, status.Error(codes.Unauthenticated, err.Error())
			}
			return callerOf(id), nil
		}
		id, err := s.auth.Authenticate(ctx, secret)
		if errors.Is(err, access.ErrUnauthenticated) {
			return callctx.Caller{}, status.Error(codes.Unauthenticated, err.Error())
		}
		if err != nil {
			return callctx.Caller{}, toStatus(ctx, s.log, err)
		}
		return callerOf(id), nil
	}
	if id, ok, err := s.certIdentity(ctx); err != nil {
		return callctx.Caller{}, status.Error(codes.Unauthenticated, err.Error())
	} else if ok {
		return callerOf(id), nil
	}
	if s.opts.OpenAccess {
		return callerOf(openAccessIdentity), nil
	}
	return callctx.Caller{}, nil
}

// openAccessIdentity is every caller's identity on a server run with open access.
var openAccessIdentity = access.Identity{Name: "open-access", Role: access.RoleOfficer, Via: "open"}

func callerOf(id access.Identity) callctx.Caller {
	return callctx.Caller{Subject: id.Name, Roles: []string{string(id.Role)}, Company: id.Company, Via: id.Via, CredentialID: id.CredentialID}
}

// callerRole is the role of the identity behind ctx (RoleAnonymous without one).
func callerRole(ctx context.Context) access.Role {
	if c := callctx.From(ctx); c != nil && len(c.Caller.Roles) > 0 {
		return access.Role(c.Caller.Roles[0])
	}
	return access.RoleAnonymous
}

// callCompany is the company a company-scoped caller (a trader) is bound to, and whether
// the caller is so bound; the workflow layer limits such a caller's calls to it.
func callCompany(ctx context.Context) (string, bool) {
	if !access.CompanyScoped(callerRole(ctx)) {
		return "", false
	}
	return callctx.From(ctx).Caller.Company, true
}

// newCall is what the interceptors put into a call's context, once: the request id the
// caller gets back in the response header, the caller, and a logger naming both.
func (s *Server) newCall(ctx context.Context, method string) *callctx.Call {
	caller, err := s.identify(ctx)
	c := &callctx.Call{RequestID: requestID(ctx), Method: method, Caller: caller, AuthErr: err}
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

// authorize applies the policy table (access.Policy) to the identity behind ctx: a call
// whose credential was refused is Unauthenticated with the reason; a method the caller's
// role may not call is Unauthenticated for a caller without a credential (saying how to
// present one) and PermissionDenied otherwise.
func (s *Server) authorize(ctx context.Context, method string) error {
	c := callctx.From(ctx)
	if c != nil && c.AuthErr != nil {
		return c.AuthErr
	}
	role := callerRole(ctx)
	if access.Allowed(role, method) {
		return nil
	}
	if role == access.RoleAnonymous {
		return status.Errorf(codes.Unauthenticated, "%s needs a credential: send 'authorization: Bearer <secret>' (halovet --credential-file), or a client certificate the server maps", method)
	}
	return status.Errorf(codes.PermissionDenied, "role %s may not call %s (credential of %s)", role, method, c.Caller.Subject)
}

// requireRole refuses the call unless the caller has one of roles: for calls that change
// data only with some arguments (PlanQuotas with issue_drafts).
func requireRole(ctx context.Context, what string, roles ...access.Role) error {
	r := callerRole(ctx)
	for _, x := range roles {
		if r == x {
			return nil
		}
	}
	return status.Errorf(codes.PermissionDenied, "%s needs the role %s; this caller's role is %q", what, roles[0], r)
}

// denied builds a PermissionDenied status naming the field whose value the caller may
// not use, and why.
func denied(field, why string) error {
	br := &errdetails.BadRequest{FieldViolations: []*errdetails.BadRequest_FieldViolation{{Field: field, Description: why}}}
	st := status.New(codes.PermissionDenied, field+": "+why)
	if d, err := st.WithDetails(br); err == nil {
		return d.Err()
	}
	return st.Err()
}

// outOfScope is the refusal of another company's record or licence to a trader.
func outOfScope(field, company, own string) error {
	return denied(field, "company "+strconv.Quote(company)+" is not this credential's company "+strconv.Quote(own)+"; a trader's credential reaches its own company only")
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
