package validate

import (
	"fmt"
	"slices"
	"strings"

	"github.com/halovet/halovet/terms"
)

// Severity of a finding. The numbers equal the wire enum halovet.v1.Severity.
type Severity int

// Severities, least severe first.
const (
	SeverityUnspecified Severity = iota
	SeverityNotice               // informational; does not affect acceptance
	SeverityWarning              // needs attention; the record is still accepted
	SeverityError                // the record is rejected
)

var severityNames = [...]string{"", "notice", "warning", "error"}

// String returns "notice", "warning" or "error".
func (s Severity) String() string {
	if s < 0 || int(s) >= len(severityNames) {
		return fmt.Sprintf("severity(%d)", int(s))
	}
	return severityNames[s]
}

// ParseSeverity reads a severity word case-insensitively.
func ParseSeverity(s string) (Severity, error) {
	switch strings.TrimPrefix(enumKey(s), "severity") {
	case "notice":
		return SeverityNotice, nil
	case "warning":
		return SeverityWarning, nil
	case "error":
		return SeverityError, nil
	}
	return SeverityUnspecified, fmt.Errorf("%w: severity %q; accepted: notice, warning, error", terms.ErrUnknownValue, cutText(s))
}

// Finding is one rule outcome on a record.
type Finding struct {
	Code     string   // stable code, listed in the code table (CodeTable)
	Severity Severity // fixed per code
	Field    string   // the record field it is about, named as in the CSV header ("quantity")
	Message  string   // what is wrong and what would be accepted
}

// String renders "error QTY_NOT_POSITIVE (quantity): message".
func (f Finding) String() string {
	if f.Field == "" {
		return f.Severity.String() + " " + f.Code + ": " + f.Message
	}
	return f.Severity.String() + " " + f.Code + " (" + f.Field + "): " + f.Message
}

// Outcome of a check. The numbers equal the wire enum halovet.v1.Outcome.
type Outcome int

// Outcomes.
const (
	OutcomeUnspecified Outcome = iota
	OutcomeAccepted
	OutcomeAcceptedWithWarnings
	OutcomeRejected
)

var outcomeNames = [...]string{"", "accepted", "accepted-with-warnings", "rejected"}

// String returns "accepted", "accepted-with-warnings" or "rejected".
func (o Outcome) String() string {
	if o < 0 || int(o) >= len(outcomeNames) {
		return fmt.Sprintf("outcome(%d)", int(o))
	}
	return outcomeNames[o]
}

// OutcomeOf derives the outcome from findings: any error rejects, any warning flags.
func OutcomeOf(findings []Finding) Outcome {
	out := OutcomeAccepted
	for i := range findings {
		switch findings[i].Severity {
		case SeverityError:
			return OutcomeRejected
		case SeverityWarning:
			out = OutcomeAcceptedWithWarnings
		}
	}
	return out
}

// sortFindings orders findings errors first, then warnings, then notices; within a severity
// the order in which the rules ran (record fields first) is kept.
func sortFindings(fs []Finding) {
	slices.SortStableFunc(fs, func(a, b Finding) int { return int(b.Severity) - int(a.Severity) })
}
