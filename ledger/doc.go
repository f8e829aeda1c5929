// Package ledger holds halovet's workflows over the register: the reporting Party's
// consumption, baselines, compliance, year report, partner reconciliation and quota
// planning (Consumption; each question reads one read-only snapshot of the register,
// Reports), the recording of its national entries and year figures (Figures), and the
// check environment, a snapshot of every country's settings, every licence with its quota
// balances, the reporting Party's allowed levels and the catalogue's derived indexes,
// built once and swapped whole when the register announces a change.
//
// The package imports neither gRPC nor a database driver: it reads the register through
// the Register and Reports interfaces, writes through DraftIssuer and FigureWriter, and
// learns of changes through Notifier, all of which the caller provides (the server adapts
// its store to them). Errors are plain Go errors, *InvalidError for bad fields and
// ErrRefused for questions the register as it stands cannot answer; the wire layer maps
// them to statuses.
package ledger
