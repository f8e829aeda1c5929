package store

import (
	"context"
	"encoding/json"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/callctx"
)

// The append-only audit log: writes to the registry, the national entries and the catalogue
// record who did what to which entry, why, and a JSON detail (the entry as written, or
// what changed).

// The actor of an entry is callctx.Actor(ctx), the name of the identity the server
// established (never anything the caller sent), with the credential id and the request id
// beside it in columns of their own; "local" for a write made in the process (a CLI verb
// on the database, a test). The database chains every entry to the one before (see the
// access migration, store/migrations/*_access.sql, and VerifyAuditChain) and refuses
// UPDATE, DELETE and TRUNCATE.

// audit appends one entry to the audit log inside tx, with detail written as JSON.
func audit(ctx context.Context, tx pgx.Tx, action, entity, key, reason string, detail any) error {
	d, err := json.Marshal(detail)
	if err != nil {
		return err
	}
	b := &pgx.Batch{}
	queueAudit(ctx, b, action, entity, key, reason, d)
	return tx.SendBatch(ctx, b).Close()
}

// queueAudit queues the insert of one audit log entry in b, for writes that send their
// statements as one batch; detail is the entry's JSON ({} when empty).
func queueAudit(ctx context.Context, b *pgx.Batch, action, entity, key, reason string, detail []byte) {
	if len(detail) == 0 {
		detail = []byte("{}")
	}
	b.Queue(`INSERT INTO audit_log (actor, credential_id, request_id, action, entity, entity_key, reason, detail)
	         VALUES ($1, $2, $3, $4, $5, $6, $7, $8)`,
		callctx.Actor(ctx), callctx.CredentialID(ctx), callctx.RequestID(ctx), action, entity, key, reason, detail)
}
