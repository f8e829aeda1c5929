package service

import (
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/terms"
)

// The wire enums of the register's vocabulary (party type, HFC group, direction, purpose,
// condition, licence status, quota unit) are mapped to package terms by wireterms, the one
// table; the store holds each value's text form (its String). storedWord and wireOf join the
// two for the store rows that still carry the text.

// storedWord gives the stored word of a wire value; false for UNSPECIFIED and for a number
// the enum does not declare.
func storedWord[W any, D interface {
	comparable
	String() string
}](from func(W) (D, bool), w W) (string, bool) {
	d, ok := from(w)
	var zero D
	if !ok || d == zero {
		return "", false
	}
	return d.String(), true
}

// wireOf gives the wire value of a stored word; a word that does not parse gives the
// UNSPECIFIED value.
func wireOf[W, D any](parse func(string) (D, error), to func(D) W, s string) W {
	d, _ := parse(s)
	return to(d)
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

// parsed reads a stored word, giving the unspecified value for a word that does not parse
// (the checks then refuse what needs the value, as they refuse an unspecified one).
func parsed[D any](parse func(string) (D, error), s string) D {
	d, _ := parse(s)
	return d
}
