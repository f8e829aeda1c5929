package store

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"time"
)

// AuditEvent is one entry of the audit log as read back.
type AuditEvent struct {
	Seq          int64 // position in the hash chain, from 1
	At           time.Time
	Actor        string
	CredentialID string
	RequestID    string
	Action       string
	Entity       string
	EntityKey    string
	Reason       string
	Detail       json.RawMessage
	Hash         []byte
}

// AuditFilter selects audit events; zero fields select everything.
type AuditFilter struct {
	Actor     string    // exact actor name
	Entity    string    // object kind: party, company, licence, substance, national_entry, shipments, credential
	EntityKey string    // object key (with Entity)
	From, To  time.Time // at >= From, at < To
	AfterSeq  int64     // events after this chain position (paging)
	Limit     int       // at most this many (default 100, at most 1000)
}

// ListAuditEvents returns the events the filter selects in chain order, and the chain
// position to continue from (0 when there are no more).
func (s *Store) ListAuditEvents(ctx context.Context, f AuditFilter) (_ []AuditEvent, next int64, err error) {
	defer classifyInto(&err)
	if f.Limit <= 0 {
		f.Limit = 100
	}
	if f.Limit > 1000 {
		f.Limit = 1000
	}
	var from, to any
	if !f.From.IsZero() {
		from = f.From
	}
	if !f.To.IsZero() {
		to = f.To
	}
	rows, err := s.pool.Query(ctx, `SELECT chain_seq, at, actor, credential_id, request_id, action, entity, entity_key, reason, detail, hash
	    FROM audit_log
	    WHERE chain_seq > $1 AND ($2 = '' OR actor = $2) AND ($3 = '' OR entity = $3) AND ($4 = '' OR entity_key = $4)
	      AND ($5::timestamptz IS NULL OR at >= $5) AND ($6::timestamptz IS NULL OR at < $6)
	    ORDER BY chain_seq LIMIT $7`, f.AfterSeq, f.Actor, f.Entity, f.EntityKey, from, to, f.Limit+1)
	if err != nil {
		return nil, 0, err
	}
	defer rows.Close()
	var out []AuditEvent
	for rows.Next() {
		var e AuditEvent
		if err := rows.Scan(&e.Seq, &e.At, &e.Actor, &e.CredentialID, &e.RequestID, &e.Action, &e.Entity, &e.EntityKey, &e.Reason, &e.Detail, &e.Hash); err != nil {
			return nil, 0, err
		}
		out = append(out, e)
	}
	if err := rows.Err(); err != nil {
		return nil, 0, err
	}
	if len(out) > f.Limit {
		out = out[:f.Limit]
		next = out[len(out)-1].Seq
	}
	return out, next, nil
}

// ChainReport is what VerifyAuditChain found.
type ChainReport struct {
	Events int64 // events checked
	// Broken lists the chain positions whose stored hash does not match their content
	// and predecessor, or whose predecessor is missing; empty when the chain holds.
	Broken []ChainBreak
	// HeadSeq is the chain position the database's chain head records; a log whose last
	// event is behind it lost events at its end.
	HeadSeq int64
}

// ChainBreak is one place the chain does not hold.
type ChainBreak struct {
	Seq    int64
	Reason string
}

// maxBreaks bounds the breaks a report lists.
const maxBreaks = 100

// VerifyAuditChain recomputes every event's hash from its content and its predecessor's
// hash, in chain order, and reports where the chain does not hold: an event altered
// (its content no longer gives its hash), removed (a gap in the positions, or a
// predecessor hash that is not the previous event's), or removed at the end (the chain
// head is further on).
func (s *Store) VerifyAuditChain(ctx context.Context) (_ ChainReport, err error) {
	defer classifyInto(&err)
	var rep ChainReport
	if err := s.pool.QueryRow(ctx, `SELECT seq FROM audit_chain_head`).Scan(&rep.HeadSeq); err != nil {
		return rep, err
	}
	rows, err := s.pool.Query(ctx, `SELECT chain_seq, coalesce(prev_hash, ''::bytea), coalesce(hash, ''::bytea),
	    audit_event_hash(prev_hash, a) FROM audit_log a ORDER BY chain_seq`)
	if err != nil {
		return rep, err
	}
	defer rows.Close()
	var lastSeq int64
	var lastHash []byte
	brk := func(seq int64, format string, args ...any) {
		if len(rep.Broken) < maxBreaks {
			rep.Broken = append(rep.Broken, ChainBreak{Seq: seq, Reason: fmt.Sprintf(format, args...)})
		}
	}
	for rows.Next() {
		var seq int64
		var prev, hash, recomputed []byte
		if err := rows.Scan(&seq, &prev, &hash, &recomputed); err != nil {
			return rep, err
		}
		rep.Events++
		if seq != lastSeq+1 {
			brk(seq, "events %d to %d are missing", lastSeq+1, seq-1)
		} else if !bytes.Equal(prev, lastHash) && !(lastSeq == 0 && len(prev) == 0) {
			brk(seq, "its previous hash is not the hash of event %d", lastSeq)
		}
		if !bytes.Equal(hash, recomputed) {
			brk(seq, "its content no longer gives its hash: the event was altered")
		}
		lastSeq, lastHash = seq, hash
	}
	if err := rows.Err(); err != nil {
		return rep, err
	}
	if rep.HeadSeq > lastSeq {
		brk(lastSeq+1, "events %d to %d are missing at the end of the log", lastSeq+1, rep.HeadSeq)
	}
	return rep, nil
}
