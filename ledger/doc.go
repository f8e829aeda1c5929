// Package ledger holds halovet's workflows over the register: for now the check
// environment, a snapshot of every country's settings, every licence with its quota
// balances, the reporting Party's allowed levels and the catalogue's derived indexes,
// built once and swapped whole when the register announces a change.
//
// The package imports neither gRPC nor a database driver: it reads the register through
// the Register interface and learns of changes through Notifier, both of which the caller
// provides (the server adapts its store to them). Errors are plain Go errors; the wire
// layer maps them to statuses.
package ledger
