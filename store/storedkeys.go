package store

import (
	"context"
	"fmt"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"
)

// The stored-key lookup of the checks (StoredRecords) runs on a pool of its own, whose
// sessions keep its statement prepared: planning the statement cost PostgreSQL several
// times what running it does, and a check asks for it on every call. A cached plan is
// only safe if it stays an index probe per key however the register grows after it was
// made (a plan cached on an empty register could otherwise scan the table for every key
// until the next ANALYZE), so these sessions take no sequential or bitmap scan
// (enable_seqscan, enable_bitmapscan off), and the statement orders each key's versions
// as the unique index (company_id, record_key, version) holds them, which only that
// index gives without a sort. The plan decides nothing about which rows are seen: every
// execution reads the register as committed when it starts, like any other statement.
// TestStoredKeyPlanIsAnIndexProbe holds the plan to that.

// storedKeysQuery returns every stored version of the (company, key) pairs $1, $2, each
// key's oldest first.
const storedKeysQuery = `SELECT s.company_id, s.record_key, s.shipment_id, s.fingerprint, s.state,
        s.version, s.recorded_at, s.verdict
    FROM unnest($1::text[], $2::text[]) AS k(company_id, record_key)
    CROSS JOIN LATERAL (SELECT company_id, record_key, shipment_id, fingerprint, state, version, recorded_at, verdict
        FROM shipments WHERE company_id = k.company_id AND record_key = k.record_key ORDER BY version OFFSET 0) s
    ORDER BY s.company_id, s.record_key, s.version`

// keyLookupSettings are the session settings of the key-lookup pool.
var keyLookupSettings = map[string]string{"plan_cache_mode": "force_generic_plan", "enable_seqscan": "off", "enable_bitmapscan": "off"}

// newKeyPool returns the key-lookup pool for the main pool's configuration: as many
// connections at most, connected when first needed, each caching its prepared statements.
func newKeyPool(ctx context.Context, cfg *pgxpool.Config) (*pgxpool.Pool, error) {
	kc := cfg.Copy()
	kc.MinConns = 0
	kc.ConnConfig.DefaultQueryExecMode = pgx.QueryExecModeCacheStatement
	for k, v := range keyLookupSettings {
		kc.ConnConfig.RuntimeParams[k] = v
	}
	p, err := pgxpool.NewWithConfig(ctx, kc)
	if err != nil {
		return nil, fmt.Errorf("key lookup pool: %w", classified(err))
	}
	return p, nil
}

// StoredRecords returns every stored version of the (company, key) pairs, oldest first:
// for a check that tells a record already recorded from a new one. It reads the register
// as committed when the statement starts (on the key-lookup pool, above).
func (s *Store) StoredRecords(ctx context.Context, keys [][2]string) (_ map[[2]string][]StoredRef, err error) {
	defer classifyInto(&err)
	if len(keys) == 0 {
		return map[[2]string][]StoredRef{}, nil
	}
	companies := make([]string, len(keys))
	recs := make([]string, len(keys))
	for i, k := range keys {
		companies[i], recs[i] = k[0], k[1]
	}
	rows, err := s.keys.Query(ctx, storedKeysQuery, companies, recs)
	if err != nil {
		return nil, err
	}
	return scanStoredRefs(rows)
}
