package controls

import (
	"errors"
	"fmt"
)

// Sentinel errors; every error this package returns wraps one of them.
var (
	// ErrInvalidInput marks bad input: a record, party, scope, year or plan parameter.
	ErrInvalidInput = errors.New("controls: invalid input")
	// ErrNoRule marks a question the rulebook has no row for (e.g. a year before the first
	// control step, or a group without a baseline).
	ErrNoRule = errors.New("controls: no rule in the rulebook")
	// ErrIncompleteBaseline marks a baseline that cannot be computed for lack of data.
	ErrIncompleteBaseline = errors.New("controls: baseline incomplete")
	// ErrNoReference marks a quota plan whose companies all have a zero reference amount.
	ErrNoReference = errors.New("controls: no reference amounts to distribute by")
	// ErrRulebookData marks malformed rulebook data.
	ErrRulebookData = errors.New("controls: malformed rulebook data")
)

// FieldError says which input field is wrong, why, and what is accepted.
type FieldError struct {
	Field    string // path of the field, e.g. "records[3].flows.imports"
	Problem  string // what is wrong with the value
	Accepted string // what would be accepted
}

func (e *FieldError) Error() string {
	return fmt.Sprintf("%s: %s; accepted: %s", e.Field, e.Problem, e.Accepted)
}

// Unwrap makes errors.Is(err, ErrInvalidInput) true.
func (e *FieldError) Unwrap() error { return ErrInvalidInput }

func fieldErr(field, accepted, format string, args ...any) error {
	return &FieldError{Field: field, Problem: fmt.Sprintf(format, args...), Accepted: accepted}
}

// DataError locates a problem in rulebook data.
type DataError struct {
	File    string // "schedules.csv" or "baselines.csv" (or the name given to ParseRulebook)
	Line    int    // 1-based line; 0 when the problem concerns the whole file
	Column  string // column name, "" when the problem concerns the whole row
	Problem string
}

func (e *DataError) Error() string {
	loc := e.File
	if e.Line > 0 {
		loc = fmt.Sprintf("%s line %d", loc, e.Line)
	}
	if e.Column != "" {
		loc = fmt.Sprintf("%s column %s", loc, e.Column)
	}
	return fmt.Sprintf("%s: %s", loc, e.Problem)
}

// Unwrap makes errors.Is(err, ErrRulebookData) true.
func (e *DataError) Unwrap() error { return ErrRulebookData }
