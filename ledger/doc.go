// Package ledger holds halovet's workflows over the register:
//   - the check environment, a snapshot of every country's settings, every licence with its
//     quota balances, the reporting Party's allowed levels and the catalogue's derived
//     indexes, built once and swapped whole when the register announces a change;
//   - the shipment workflows (Shipments): checking a stream of records, recording one (each
//     record judged against the register as it stands when it is judged, replays and
//     conflicts told apart by validate.MatchKey), correcting and voiding recorded
//     shipments, closing and reopening reporting years;
//   - the reporting Party's consumption, baselines, compliance, year report, partner
//     reconciliation and quota planning (Consumption; each question reads one read-only
//     snapshot of the register, Reports), and the recording of its national entries and
//     year figures (Figures).
//
// The package imports neither gRPC, nor a database driver, nor the generated API package:
// it reads the register through the Register, ShipmentRegister and Reports interfaces,
// writes through DraftIssuer and FigureWriter, and learns of changes through Notifier, all
// of which the caller provides (the server adapts its store to them); a stream comes in
// through VerdictStream, and a verdict kept with a shipment is encoded by the caller's
// VerdictCodec. Errors are plain Go errors (FieldError, *InvalidError for bad fields,
// ErrRefused for questions the register as it stands cannot answer, ErrNotConfigured, or
// the register's own, unchanged); the wire layer maps them to statuses.
package ledger
