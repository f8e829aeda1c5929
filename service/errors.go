package service

import (
	"context"
	"errors"
	"fmt"
	"log/slog"

	"github.com/jackc/pgx/v5/pgconn"
	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/store"
)

const errorDomain = "halovet.dev"

// fieldViolation is one bad field of a request.
type fieldViolation struct{ field, why string }

// invalid builds an InvalidArgument status listing the bad fields.
func invalid(vs ...fieldViolation) error {
	br := &errdetails.BadRequest{}
	msg := ""
	for i, v := range vs {
		br.FieldViolations = append(br.FieldViolations, &errdetails.BadRequest_FieldViolation{Field: v.field, Description: v.why})
		if i > 0 {
			msg += "; "
		}
		msg += v.field + ": " + v.why
	}
	st := status.New(codes.InvalidArgument, msg)
	if d, err := st.WithDetails(br); err == nil {
		return d.Err()
	}
	return st.Err()
}

// toStatus maps a domain or store error to a gRPC status. SQL text never reaches the
// caller; it is logged.
func toStatus(ctx context.Context, log *slog.Logger, err error) error {
	if err == nil {
		return nil
	}
	if _, ok := status.FromError(err); ok {
		return err
	}
	withReason := func(c codes.Code, reason string) error {
		st := status.New(c, err.Error())
		if d, e := st.WithDetails(&errdetails.ErrorInfo{Reason: reason, Domain: errorDomain}); e == nil {
			return d.Err()
		}
		return st.Err()
	}
	switch {
	case errors.Is(err, store.ErrNotFound):
		return withReason(codes.NotFound, "NOT_FOUND")
	case errors.Is(err, store.ErrAlreadyExists):
		return withReason(codes.AlreadyExists, "ALREADY_EXISTS")
	case errors.Is(err, store.ErrConflict):
		return withReason(codes.FailedPrecondition, "CONFLICT")
	case errors.Is(err, context.Canceled):
		return status.Error(codes.Canceled, "call cancelled")
	case errors.Is(err, context.DeadlineExceeded):
		return status.Error(codes.DeadlineExceeded, "deadline exceeded")
	}
	var pg *pgconn.PgError
	if errors.As(err, &pg) {
		log.ErrorContext(ctx, "database error", "sqlstate", pg.Code, "err", err)
		switch pg.Code {
		case "40001", "40P01":
			return status.Error(codes.Aborted, "the transaction lost a race with another; retry")
		case "57P01", "57P02", "57P03", "53300":
			return status.Error(codes.Unavailable, "the database is not available; retry with backoff")
		}
		return status.Error(codes.Internal, fmt.Sprintf("database error (SQLSTATE %s); the server log has the details", pg.Code))
	}
	var ce *pgconn.ConnectError
	if errors.As(err, &ce) || pgconn.SafeToRetry(err) {
		log.ErrorContext(ctx, "database unavailable", "err", err)
		return status.Error(codes.Unavailable, "the database is not available; retry with backoff")
	}
	log.ErrorContext(ctx, "internal error", "err", err)
	return status.Error(codes.Internal, "internal error; the server log has the details")
}

func notFoundStatus(msg string) error {
	st := status.New(codes.NotFound, msg)
	if d, err := st.WithDetails(&errdetails.ErrorInfo{Reason: "NOT_FOUND", Domain: errorDomain}); err == nil {
		return d.Err()
	}
	return st.Err()
}
