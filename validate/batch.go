package validate

import (
	"strconv"
	"strings"
)

// DuplicateWindow is how many of a stream's most recent distinct (company, key) pairs a
// Batch remembers to tell replays and conflicts apart. A Batch's memory stays bounded
// however long the stream is; a duplicate further back than this is not seen in check
// mode (recording looks every key up in the store, so nothing is ever counted twice).
const DuplicateWindow = 100_000

// Batch checks the records of one stream in order (check mode): it carries a MemoryLedger so
// each record is judged against the quota earlier records left, and it remembers the last
// DuplicateWindow (company, key) pairs with their fingerprints to tell a replay from a
// conflict. Keys and contents are kept as 64-bit hashes (maphash; nothing is stored in
// check mode, so the content is not fingerprinted with SHA-256: the verdicts of a Batch
// carry no Fingerprint). A Batch is not safe for concurrent use; use one per stream.
type Batch struct {
	env    *Env
	ledger *MemoryLedger
	seen   *KeyWindow[seenRecord] // by hash of company and key
	// scratch holds CheckAll's records between the parallel rules and the settling, reused
	// from message to message.
	scratch []checker
}

type seenRecord struct {
	fingerprint uint64 // contentHash of the record
	line        int64
}

// NewBatch returns an empty batch over env, which must pass Validate.
func NewBatch(env *Env) *Batch { return newBatch(env, DuplicateWindow) }

func newBatch(env *Env, window int) *Batch {
	return &Batch{env: env, ledger: NewMemoryLedger(), seen: NewKeyWindow[seenRecord](window)}
}

// SetEnv judges the records checked from now on against env (which must pass Validate),
// as a long stream does when the register changes under it; the quota drawn by earlier
// records and the keys seen carry over.
func (b *Batch) SetEnv(env *Env) { b.env = env }

// Ledger returns the batch's quota ledger.
func (b *Batch) Ledger() *MemoryLedger { return b.ledger }

// Check checks the next record of the stream. A record whose company and key came before
// with the same content is a replay: it gets the DUP_REPLAY notice, Replayed is set and
// nothing is drawn twice. The same key with other content is DUP_KEY_CONFLICT, an error.
func (b *Batch) Check(r *Record) Verdict {
	c := checker{env: b.env, r: r, seed: &b.seen.seed}
	c.rules()
	return b.settle(&c)
}

// settle finishes a record that has been through the pure rules, in stream order: its
// quota against what earlier records drew, and its key against the keys seen.
func (b *Batch) settle(c *checker) Verdict {
	r := c.r
	company, key := strings.TrimSpace(r.CompanyID), strings.TrimSpace(r.Key)
	if key == "" {
		return c.finish(b.ledger)
	}
	k := b.seen.Hash(company, key)
	prev, dup := b.seen.Get(k)
	if !dup {
		v := c.finish(b.ledger)
		b.seen.Put(k, seenRecord{fingerprint: c.fpHash, line: r.Line})
		return v
	}
	v := c.finish(nil) // nothing drawn for a duplicate
	m, _ := MatchKey([]seenRecord{prev}, func(s seenRecord) uint64 { return s.fingerprint }, c.fpHash)
	v.Add(KeyFinding(m, prev.line))
	v.Replayed = m == KeyReplay
	v.Draws = nil
	return v
}

// KeyMatch is how a record whose company and key came before stands to what came before.
type KeyMatch int

// The answers of MatchKey.
const (
	// KeyNew: the key did not come before.
	KeyNew KeyMatch = iota
	// KeyReplay: a version with the same content came before; the record is a replay of
	// it, answered as that version was and not counted again.
	KeyReplay
	// KeyConflict: the key came before with other content; the record is an error (a
	// recorded shipment is changed by a correction, a new record needs a new key).
	KeyConflict
)

// MatchKey is the one rule that tells a replay from a conflict, wherever a record's
// company and key came before: earlier in its check stream (Batch), earlier in its
// recording stream or write batch, or in the register. earlier are the versions that came
// before under the key, oldest first, fingerprint gives each one's content fingerprint and
// fp is the record's own. The answer is KeyNew when there are none, KeyReplay of the newest
// version with the same content, or KeyConflict with the newest version; at is the index
// of that version in earlier (-1 for KeyNew).
func MatchKey[V any, F comparable](earlier []V, fingerprint func(V) F, fp F) (m KeyMatch, at int) {
	if len(earlier) == 0 {
		return KeyNew, -1
	}
	for i := len(earlier) - 1; i >= 0; i-- {
		if fingerprint(earlier[i]) == fp {
			return KeyReplay, i
		}
	}
	return KeyConflict, len(earlier) - 1
}

// KeyFinding is the finding MatchKey's answer m earns: DUP_REPLAY (notice) for a replay,
// DUP_KEY_CONFLICT (error) for a conflict. firstLine is the line of the earlier record, 0
// when unknown (for example when the earlier record is in the store). m must not be KeyNew.
func KeyFinding(m KeyMatch, firstLine int64) Finding {
	if m == KeyReplay {
		return DuplicateFinding("", "", firstLine)
	}
	return DuplicateFinding("", "other", firstLine)
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
