package validate

import (
	"strconv"
	"strings"
)

// Batch checks the records of one stream in order (check mode): it carries a MemoryLedger so
// each record is judged against the quota earlier records left, and it remembers each
// (company, key) with its fingerprint to tell a replay from a conflict. A Batch is not safe for
// concurrent use; use one per stream.
type Batch struct {
	env    *Env
	ledger *MemoryLedger
	seen   map[batchKey]seenRecord
}

type batchKey struct {
	company string
	key     string
}

type seenRecord struct {
	fingerprint string
	line        int64
}

// NewBatch returns an empty batch over env, which must pass Validate.
func NewBatch(env *Env) *Batch {
	return &Batch{env: env, ledger: NewMemoryLedger(), seen: map[batchKey]seenRecord{}}
}

// Ledger returns the batch's quota ledger.
func (b *Batch) Ledger() *MemoryLedger { return b.ledger }

// Check checks the next record of the stream. A record whose company and key came before
// with the same content is a replay: it gets the DUP_REPLAY notice, Replayed is set and
// nothing is drawn twice. The same key with other content is DUP_KEY_CONFLICT, an error.
func (b *Batch) Check(r *Record) Verdict {
	k := batchKey{strings.TrimSpace(r.CompanyID), strings.TrimSpace(r.Key)}
	if k.key == "" {
		return Check(b.env, r, b.ledger)
	}
	prev, dup := b.seen[k]
	if !dup {
		v := Check(b.env, r, b.ledger)
		b.seen[k] = seenRecord{fingerprint: v.Fingerprint, line: r.Line}
		return v
	}
	v := Check(b.env, r, nil) // nothing drawn for a duplicate
	v.Add(DuplicateFinding(prev.fingerprint, v.Fingerprint, prev.line))
	if v.Fingerprint == prev.fingerprint {
		v.Replayed = true
	}
	v.Draws = nil
	return v
}

// DuplicateFinding is the finding for a record whose company and key were seen before with
// the stored fingerprint: DUP_REPLAY (notice) when the content is the same, DUP_KEY_CONFLICT
// (error) when it differs. firstLine is the line of the earlier record, 0 when unknown (for
// example when the earlier record is in the store).
func DuplicateFinding(storedFingerprint, fingerprint string, firstLine int64) Finding {
	where := "an earlier record"
	if firstLine > 0 {
		where = "the record on line " + strconv.FormatInt(firstLine, 10)
	}
	if storedFingerprint == fingerprint {
		return newFinding(CodeDupReplay, "", "same key and same content as "+where+"; treated as a replay, not counted again")
	}
	return newFinding(CodeDupKeyConflict, "", "the key was used by "+where+" with different content; give a new record a new key")
}
