package service

import (
	"context"
	"errors"
	"log/slog"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/callctx"
	"github.com/halovet/halovet/ledger"
	"github.com/halovet/halovet/store"
)

// errorDomain is the google.rpc.ErrorInfo domain of halovet's error reasons: the proto
// package of its API, a name the project owns (it registers no internet domain).
const errorDomain = "halovet.v1"

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

// toStatus maps a domain or store error to a gRPC status: the one place where the
// store's kinds of error become codes. SQL text never reaches the caller; it is logged,
// with the call's logger when there is one (it names the request id).
//
//	store.ErrNotFound      NotFound           (ErrorInfo NOT_FOUND)
//	store.ErrAlreadyExists AlreadyExists      (ErrorInfo ALREADY_EXISTS)
//	store.ErrConflict      FailedPrecondition (ErrorInfo CONFLICT)
//	store.ErrRetryable     Aborted            retry the call
//	store.ErrUnavailable   Unavailable        retry with backoff
//	store.ErrTimeout       DeadlineExceeded   the statement_timeout fired
//	context errors         Canceled, DeadlineExceeded
//	anything else          Internal
func toStatus(ctx context.Context, log *slog.Logger, err error) error {
	if err == nil {
		return nil
	}
	if _, ok := status.FromError(err); ok {
		return err
	}
	if c := callctx.From(ctx); c != nil && c.Logger != nil {
		log = c.Logger
	}
	withReason := func(c codes.Code, reason string) error {
		st := status.New(c, err.Error())
		if d, e := st.WithDetails(&errdetails.ErrorInfo{Reason: reason, Domain: errorDomain}); e == nil {
			return d.Err()
		}
		return st.Err()
	}
	switch {
	case errors.Is(err, context.Canceled):
		return status.Error(codes.Canceled, "call cancelled")
	case errors.Is(err, context.DeadlineExceeded):
		return status.Error(codes.DeadlineExceeded, "deadline exceeded")
	case errors.Is(err, store.ErrUnavailable):
		log.ErrorContext(ctx, "database unavailable", "err", err)
		return status.Error(codes.Unavailable, "the database is not available; retry with backoff")
	case errors.Is(err, store.ErrTimeout):
		log.WarnContext(ctx, "database statement timed out", "err", err)
		return status.Error(codes.DeadlineExceeded, "the database statement ran past its time limit (serve --statement-timeout); narrow the request or retry later")
	case errors.Is(err, store.ErrRetryable):
		log.WarnContext(ctx, "transaction lost a race", "err", err)
		return status.Error(codes.Aborted, "the transaction lost a race with another; retry")
	case errors.Is(err, store.ErrNotFound):
		return withReason(codes.NotFound, "NOT_FOUND")
	case errors.Is(err, store.ErrAlreadyExists):
		return withReason(codes.AlreadyExists, "ALREADY_EXISTS")
	case errors.Is(err, store.ErrConflict):
		return withReason(codes.FailedPrecondition, "CONFLICT")
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

// ledgerStatus maps an error of a ledger workflow to a gRPC status: the one place where
// the workflows' errors become codes.
//
//	*ledger.InvalidError    InvalidArgument, one field violation each
//	ledger.ErrRefused       FailedPrecondition: the register needs a change first
//	ledger.ErrNotConfigured FailedPrecondition
//	a status already        unchanged (a role check the workflow asked for)
//	anything else           toStatus
func (s *Server) ledgerStatus(ctx context.Context, err error) error {
	var ie *ledger.InvalidError
	switch {
	case err == nil:
		return nil
	case errors.As(err, &ie):
		vs := make([]fieldViolation, len(ie.Violations))
		for i, v := range ie.Violations {
			vs[i] = fieldViolation{v.Field, v.Why}
		}
		return invalid(vs...)
	case errors.Is(err, ledger.ErrRefused), errors.Is(err, ledger.ErrNotConfigured):
		return status.Error(codes.FailedPrecondition, err.Error())
	}
	return toStatus(ctx, s.log, err)
}
