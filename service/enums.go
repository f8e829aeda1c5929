package service

import (
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/terms"
)

// The wire enums of the register's vocabulary (party type, HFC group, direction, purpose,
// condition, licence status, quota unit) are mapped to package terms by wireterms, the one
// table; store reads and writes the terms types. The helpers here only add what a request
// needs beyond the table.

// specified gives the domain value of a wire value; false for UNSPECIFIED and for a number
// the enum does not declare.
func specified[W any, D comparable](from func(W) (D, bool), w W) (D, bool) {
	d, ok := from(w)
	var zero D
	return d, ok && d != zero
}

// invert builds the text -> enum map of an enum -> text map.
func invert[E comparable](m map[E]string) map[string]E {
	out := make(map[string]E, len(m))
	for k, v := range m {
		out[v] = k
	}
	return out
}

// A shipment record's enums: a number the wire enum does not declare is passed on as the
// same number, out of the domain's range, so that validate.Check reports it as an
// unreadable field with the number the client sent (its answer since v1's first draft).
// These are the only conversions by number, and only for undeclared values.

func recordDirection(w halovetv1.Direction) terms.Direction {
	if d, ok := wireterms.DirectionFromWire(w); ok {
		return d
	}
	return terms.Direction(w)
}

func recordPurpose(w halovetv1.Purpose) terms.Purpose {
	if d, ok := wireterms.PurposeFromWire(w); ok {
		return d
	}
	return terms.Purpose(w)
}

func recordCondition(w halovetv1.Condition) terms.Condition {
	if d, ok := wireterms.ConditionFromWire(w); ok {
		return d
	}
	return terms.Condition(w)
}
