package ledger

import (
	"errors"
	"strings"
)

// FieldViolation is one bad field of a request: its path and why it is refused, with what
// is accepted.
type FieldViolation struct{ Field, Why string }

// InvalidError lists the bad fields of a request; nothing was done.
type InvalidError struct{ Violations []FieldViolation }

func (e *InvalidError) Error() string {
	parts := make([]string, len(e.Violations))
	for i, v := range e.Violations {
		parts[i] = v.Field + ": " + v.Why
	}
	return strings.Join(parts, "; ")
}

// invalid returns nil for no violations, an *InvalidError otherwise.
func invalid(vs ...FieldViolation) error {
	if len(vs) == 0 {
		return nil
	}
	return &InvalidError{Violations: vs}
}

// ErrRefused marks a question the register as it stands cannot answer (no reporting
// Party, data the arithmetic cannot use, no allowed level to plan from, a licence no
// longer a draft): the caller's request is well formed; the register needs a change.
var ErrRefused = errors.New("the register as it stands cannot answer this")

// RefusedError says why the register cannot answer and what to change.
type RefusedError struct{ Msg string }

func (e *RefusedError) Error() string { return e.Msg }

// Unwrap makes errors.Is(err, ErrRefused) true.
func (e *RefusedError) Unwrap() error { return ErrRefused }

func refused(msg string) error { return &RefusedError{Msg: msg} }
