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

// The actor of an entry is callctx.Actor(ctx): the caller and the request id the caller
// got back, so that a call and the rows it wrote can be matched; "local" for a write
// made in the process (a CLI verb on the database, a test).

// audit appends one entry to the audit log inside tx, with detail written as JSON.
func audit(ctx context.Context, tx pgx.Tx, action, entity, key, reason string, detail any) error {
	d, err := json.Marshal(detail)
	if err != nil {
		return err
	}
	b := &pgx.Batch{}
	queueAudit(b, callctx.Actor(ctx), action, entity, key, reason, d)
	return tx.SendBatch(ctx, b).Close()
}

// queueAudit queues the insert of one audit log entry in b, for writes that send their
// statements as one batch; detail is the entry's JSON ({} when empty).
func queueAudit(b *pgx.Batch, actor, action, entity, key, reason string, detail []byte) {
	if len(detail) == 0 {
		detail = []byte("{}")
	}
	b.Queue(`INSERT INTO audit_log (actor, action, entity, entity_key, reason, detail)
	         VALUES ($1, $2, $3, $4, $5, $6)`, actor, action, entity, key, reason, detail)
}
