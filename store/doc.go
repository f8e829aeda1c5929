// Package store keeps halovet's state in PostgreSQL through pgx: the embedded schema
// migrations, the catalogue, parties, companies and licences, recorded shipments with
// their quota draws, national entries and the append-only audit log.
package store
