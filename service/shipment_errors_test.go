package service

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"testing"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/ledger"
	"github.com/halovet/halovet/store"
)

// The workflows' errors become statuses in toStatus only: each kind of FieldError its code,
// with the fields named in a BadRequest; ErrNotConfigured FailedPrecondition saying how to
// set the register up; a store error the workflows hand back unchanged keeps its code.
func TestToStatusMapsTheWorkflowErrors(t *testing.T) {
	log := slog.New(slog.NewTextHandler(io.Discard, nil))
	ctx := context.Background()
	cases := []struct {
		err   error
		code  codes.Code
		field string // "" when no BadRequest is expected
	}{
		{&ledger.FieldError{Kind: ledger.Invalid, Violations: []ledger.Violation{{Field: "record", Why: "x"}, {Field: "shipment_id", Why: "y"}}}, codes.InvalidArgument, "record"},
		{&ledger.FieldError{Kind: ledger.Refused, Violations: []ledger.Violation{{Field: "year", Why: "closed already"}}}, codes.FailedPrecondition, "year"},
		{&ledger.FieldError{Kind: ledger.Denied, Violations: []ledger.Violation{{Field: "record.licence_number", Why: "another company's"}}}, codes.PermissionDenied, "record.licence_number"},
		{&ledger.FieldError{Kind: ledger.NotFound, Violations: []ledger.Violation{{Field: "record", Why: "no live shipment"}}}, codes.NotFound, ""},
		{fmt.Errorf("%w: no reporting Party", ledger.ErrNotConfigured), codes.FailedPrecondition, ""},
		{fmt.Errorf("recording: %w", store.ErrUnavailable), codes.Unavailable, ""},
		{fmt.Errorf("%w: record %q: bad date", ledger.ErrRecordRow, "K"), codes.Internal, ""},
	}
	for _, c := range cases {
		st := status.Convert(toStatus(ctx, log, c.err))
		if st.Code() != c.code {
			t.Errorf("%v: %v; want %v", c.err, st.Code(), c.code)
			continue
		}
		if c.field == "" {
			continue
		}
		var br *errdetails.BadRequest
		for _, d := range st.Details() {
			if b, ok := d.(*errdetails.BadRequest); ok {
				br = b
			}
		}
		if br == nil || len(br.GetFieldViolations()) == 0 || br.GetFieldViolations()[0].GetField() != c.field {
			t.Errorf("%v: details %v; want a BadRequest naming %s first", c.err, st.Details(), c.field)
		}
	}
	var fe *ledger.FieldError
	if errors.As(errors.New("plain"), &fe) {
		t.Fatal("errors.As found a FieldError in a plain error")
	}
}

// Every outcome the store gives a recorded row has its own outcome in the workflows.
func TestRecordStatusMapping(t *testing.T) {
	seen := map[ledger.RecordStatus]store.RecordStatus{}
	for _, s := range []store.RecordStatus{store.RecordStored, store.RecordReplayed, store.RecordKeyConflict,
		store.RecordQuotaShort, store.RecordLicenceInactive, store.RecordYearClosed, store.RecordLicenceChanged} {
		l, ok := recordStatus[s]
		if !ok || l == 0 {
			t.Errorf("store status %d has no workflow status", s)
			continue
		}
		if prev, dup := seen[l]; dup {
			t.Errorf("store statuses %d and %d both map to %d", prev, s, l)
		}
		seen[l] = s
	}
	if len(recordStatus) != len(seen) {
		t.Errorf("recordStatus maps %d statuses; the store has %d", len(recordStatus), len(seen))
	}
}
