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
)

// The interceptor chain, in order: recovery, request id, logging, auth.
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

// requestID returns the caller's x-request-id, or a new one.
func requestID(ctx context.Context) string {
	if md, ok := metadata.FromIncomingContext(ctx); ok {
		if v := md.Get("x-request-id"); len(v) > 0 && v[0] != "" && len(v[0]) <= 128 {
			return v[0]
		}
	}
	var b [8]byte
	_, _ = rand.Read(b[:])
	return hex.EncodeToString(b[:])
}

func (s *Server) logUnary(ctx context.Context, req any, info *grpc.UnaryServerInfo, h grpc.UnaryHandler) (any, error) {
	start := time.Now()
	id := requestID(ctx)
	_ = grpc.SetHeader(ctx, metadata.Pairs("x-request-id", id))
	resp, err := h(ctx, req)
	s.logCall(ctx, info.FullMethod, id, start, err)
	return resp, err
}

func (s *Server) logStream(srv any, ss grpc.ServerStream, info *grpc.StreamServerInfo, h grpc.StreamHandler) error {
	start := time.Now()
	id := requestID(ss.Context())
	_ = ss.SetHeader(metadata.Pairs("x-request-id", id))
	err := h(srv, ss)
	s.logCall(ss.Context(), info.FullMethod, id, start, err)
	return err
}

func (s *Server) logCall(ctx context.Context, method, id string, start time.Time, err error) {
	code := status.Code(err)
	level := slog.LevelInfo
	if code == codes.Internal || code == codes.Unavailable || code == codes.DataLoss {
		level = slog.LevelError
	}
	s.log.Log(ctx, level, "call", "method", method, "request_id", id, "code", code.String(),
		"duration_ms", time.Since(start).Milliseconds())
}

// adminMethods change the catalogue or licensing; when an admin token is configured
// they need "authorization: Bearer <token>".
func isAdminMethod(full string) bool {
	switch full {
	case "/halovet.v1.CatalogueService/UpsertSubstance",
		"/halovet.v1.ConsumptionService/RecordNationalEntries":
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
	vals := md.Get("authorization")
	if len(vals) == 0 {
		return status.Error(codes.Unauthenticated, "this call changes data and needs 'authorization: Bearer <admin token>'")
	}
	tok, ok := strings.CutPrefix(vals[0], "Bearer ")
	if !ok || subtle.ConstantTimeCompare([]byte(tok), []byte(s.opts.AdminToken)) != 1 {
		return status.Error(codes.PermissionDenied, "the admin token is not valid")
	}
	return nil
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
