// Package ledger holds halovet's workflows over the register: the check environment, a
// snapshot of every country's settings, every licence with its quota balances, the
// reporting Party's allowed levels and the catalogue's derived indexes, built once and
// swapped whole when the register announces a change; and the shipment workflows
// (Shipments): checking a stream of records, recording one (each record judged against the
// register as it stands when it is judged, replays and conflicts told apart by
// validate.MatchKey), correcting and voiding recorded shipments, closing and reopening
// reporting years.
//
// The package imports neither gRPC, nor a database driver, nor the generated API package:
// it reads the register through the Register and ShipmentRegister interfaces and learns of
// changes through Notifier, all of which the caller provides (the server adapts its store
// to them); a stream comes in through VerdictStream, and a verdict kept with a shipment is
// encoded by the caller's VerdictCodec. Errors are plain Go errors (FieldError,
// ErrNotConfigured, or the register's own, unchanged); the wire layer maps them to
// statuses.
package ledger
