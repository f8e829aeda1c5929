// Package terms holds the vocabulary the register shares between its layers: the Party type
// and the Kigali HFC group of a country, the direction, purpose and condition of a shipment,
// the status of a licence and the unit of a quota line. Each concept is one Go type here,
// used as it is by validate (the checks), controls (the control schedules), ledger (the
// workflows) and store (the database), so no layer keeps a copy with its own numbering and no
// hand-written map translates between them. The service package maps these types to the wire
// enums of halovet.v1 in one file.
//
// Why a package of its own rather than substances, the lowest package the others import:
// substances is the catalogue of chemicals, and none of these terms describe a chemical. A
// leaf that imports nothing of ours (only the standard library) can be imported by every
// layer, substances included, without an import cycle and without pulling the catalogue into
// a package that needs only a word. The Annex group (substances.Group) stays in substances: it
// is a property of a catalogue substance, already one type with one text form ("A/I"), and
// substances.ParseGroup reads it.
//
// Every type has a String method giving its text form — the word the database holds and
// batch files use ("re-export", "non-a5-variant", "co2e-t"), "" for the unspecified value —
// and a Parse function that reads that word case-insensitively, tolerating hyphens,
// underscores and spaces and the wire names ("DIRECTION_RE_EXPORT"); its error wraps
// ErrUnknownValue and says which text was read and what is accepted. Each type also
// implements database/sql's Scanner and driver.Valuer with that text form, so store scans
// into and writes from these types directly.
package terms
