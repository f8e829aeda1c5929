package store

import (
	"context"
	"encoding/json"
	"fmt"
	"sort"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/substances"
)

// CatalogueChannel is the LISTEN/NOTIFY channel on which a catalogue change is announced,
// so that every replica reloads its snapshot.
const CatalogueChannel = "halovet_catalogue"

// catalogueLockID serialises seed synchronisation between replicas starting together.
const catalogueLockID = 0x68616c6f7663 // "halovc"

// SyncSeed writes the embedded seed catalogue into the database in one transaction:
// seed substances and blends are inserted or updated, substances an administrator has
// corrected (origin 'admin') are left as they are. It announces the change on
// CatalogueChannel.
func (s *Store) SyncSeed(ctx context.Context, subs []substances.Substance, blends []substances.Blend) error {
	// READ COMMITTED: the advisory lock serialises seeding replicas, and every statement
	// is an upsert that reads the row as it stands when it runs.
	return s.inTx(ctx, readCommitted, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, `SELECT pg_advisory_xact_lock($1)`, int64(catalogueLockID)); err != nil {
			return err
		}
		b := &pgx.Batch{}
		for i := range subs {
			queueSubstance(b, &subs[i], "seed")
		}
		for i := range blends {
			queueBlend(b, &blends[i])
		}
		b.Queue(`SELECT pg_notify($1, 'seed')`, CatalogueChannel)
		if err := tx.SendBatch(ctx, b).Close(); err != nil {
			return fmt.Errorf("writing the seed catalogue: %w", err)
		}
		return nil
	})
}

// queueSubstance queues the statements that write one substance. For origin "seed" an
// administrator's row is not overwritten (the WHERE on the upsert); the dependent rows
// are then rewritten from whatever the substances row holds now, so they stay consistent.
func queueSubstance(b *pgx.Batch, x *substances.Substance, origin string) {
	hs17, hs22 := nonNil(x.HS2017), nonNil(x.HS2022)
	cond := ""
	if origin == "seed" {
		cond = " WHERE substances.origin = 'seed'"
	}
	b.Queue(`INSERT INTO substances (designation, chemical_name, formula, structure, cas_number,
	            annex_group, odp, odp_range_low, odp_range_high, isomer_count, lifetime_years,
	            molar_mass, hs2017, hs2022, safety_class, sources, origin, updated_at)
	         VALUES ($1,$2,$3,$4,$5,$6,$7,$8,$9,$10,$11,$12,$13,$14,$15,$16,$17, now())
	         ON CONFLICT (designation) DO UPDATE SET chemical_name = EXCLUDED.chemical_name,
	            formula = EXCLUDED.formula, structure = EXCLUDED.structure,
	            cas_number = EXCLUDED.cas_number, annex_group = EXCLUDED.annex_group,
	            odp = EXCLUDED.odp, odp_range_low = EXCLUDED.odp_range_low,
	            odp_range_high = EXCLUDED.odp_range_high, isomer_count = EXCLUDED.isomer_count,
	            lifetime_years = EXCLUDED.lifetime_years, molar_mass = EXCLUDED.molar_mass,
	            hs2017 = EXCLUDED.hs2017, hs2022 = EXCLUDED.hs2022,
	            safety_class = EXCLUDED.safety_class, sources = EXCLUDED.sources,
	            origin = EXCLUDED.origin, updated_at = now()`+cond,
		x.Designation, x.ChemicalName, x.Formula, x.Structure, x.CAS, string(x.Group), x.ODP,
		x.ODPLow, x.ODPHigh, max(x.IsomerCount, 1), x.Lifetime, x.MolarMass, hs17, hs22,
		x.SafetyClass, x.Sources, origin)
	if origin == "seed" {
		// Leave the GWPs and aliases of an administrator's row alone too.
		guard := ` AND EXISTS (SELECT 1 FROM substances WHERE designation = $1 AND origin = 'seed')`
		b.Queue(`DELETE FROM substance_gwps WHERE designation = $1`+guard, x.Designation)
		b.Queue(`DELETE FROM aliases WHERE designation = $1`+guard, x.Designation)
		for _, set := range sortedSets(x.GWP) {
			b.Queue(`INSERT INTO substance_gwps (designation, gwp_set, gwp100)
			         SELECT $1, $2, $3 WHERE EXISTS (SELECT 1 FROM substances WHERE designation = $1 AND origin = 'seed')`,
				x.Designation, string(set), x.GWP[set])
		}
		for _, a := range x.Synonyms {
			b.Queue(`INSERT INTO aliases (alias, designation, entry_kind)
			         SELECT $2, $1, 'substance' WHERE EXISTS (SELECT 1 FROM substances WHERE designation = $1 AND origin = 'seed')
			         ON CONFLICT DO NOTHING`, x.Designation, a)
		}
		return
	}
	b.Queue(`DELETE FROM substance_gwps WHERE designation = $1`, x.Designation)
	b.Queue(`DELETE FROM aliases WHERE designation = $1`, x.Designation)
	for _, set := range sortedSets(x.GWP) {
		b.Queue(`INSERT INTO substance_gwps (designation, gwp_set, gwp100) VALUES ($1, $2, $3)`,
			x.Designation, string(set), x.GWP[set])
	}
	for _, a := range x.Synonyms {
		b.Queue(`INSERT INTO aliases (alias, designation, entry_kind) VALUES ($2, $1, 'substance')
		         ON CONFLICT DO NOTHING`, x.Designation, a)
	}
}

func queueBlend(b *pgx.Batch, x *substances.Blend) {
	b.Queue(`INSERT INTO blends (designation, blend_type, safety_class, sources, updated_at)
	         VALUES ($1, $2, $3, $4, now())
	         ON CONFLICT (designation) DO UPDATE SET blend_type = EXCLUDED.blend_type,
	            safety_class = EXCLUDED.safety_class, sources = EXCLUDED.sources, updated_at = now()`,
		x.Designation, x.Type, x.SafetyClass, x.Sources)
	b.Queue(`DELETE FROM blend_components WHERE blend = $1`, x.Designation)
	for i, c := range x.Components {
		b.Queue(`INSERT INTO blend_components (blend, position, component, mass_pct, tol_plus, tol_minus)
		         VALUES ($1, $2, $3, $4, $5, $6)`, x.Designation, i+1, c.Designation, c.MassPct, c.TolPlus, c.TolMinus)
	}
	b.Queue(`DELETE FROM aliases WHERE designation = $1 AND entry_kind = 'blend'`, x.Designation)
	for _, a := range x.Synonyms {
		b.Queue(`INSERT INTO aliases (alias, designation, entry_kind) VALUES ($2, $1, 'blend')
		         ON CONFLICT DO NOTHING`, x.Designation, a)
	}
}

func nonNil[T any](s []T) []T {
	if s == nil {
		return []T{}
	}
	return s
}

func sortedSets(m map[substances.GWPSet]float64) []substances.GWPSet {
	sets := make([]substances.GWPSet, 0, len(m))
	for k := range m {
		sets = append(sets, k)
	}
	sort.Slice(sets, func(i, j int) bool { return sets[i] < sets[j] })
	return sets
}

// LoadCatalogue reads every substance and blend.
func (s *Store) LoadCatalogue(ctx context.Context) (_ []substances.Substance, _ []substances.Blend, err error) {
	defer classifyInto(&err)
	var subs []substances.Substance
	idx := map[string]int{}
	rows, err := s.pool.Query(ctx, `SELECT designation, chemical_name, formula, structure, cas_number,
	    annex_group, odp, odp_range_low, odp_range_high, isomer_count, lifetime_years, molar_mass,
	    hs2017, hs2022, safety_class, sources FROM substances ORDER BY designation`)
	if err != nil {
		return nil, nil, fmt.Errorf("reading substances: %w", err)
	}
	for rows.Next() {
		var x substances.Substance
		var group string
		if err := rows.Scan(&x.Designation, &x.ChemicalName, &x.Formula, &x.Structure, &x.CAS, &group,
			&x.ODP, &x.ODPLow, &x.ODPHigh, &x.IsomerCount, &x.Lifetime, &x.MolarMass,
			&x.HS2017, &x.HS2022, &x.SafetyClass, &x.Sources); err != nil {
			rows.Close()
			return nil, nil, err
		}
		x.Group = substances.Group(group)
		x.GWP = map[substances.GWPSet]float64{}
		idx[x.Designation] = len(subs)
		subs = append(subs, x)
	}
	if err := rows.Err(); err != nil {
		return nil, nil, err
	}
	rows, err = s.pool.Query(ctx, `SELECT designation, gwp_set, gwp100 FROM substance_gwps`)
	if err != nil {
		return nil, nil, err
	}
	for rows.Next() {
		var d, set string
		var v float64
		if err := rows.Scan(&d, &set, &v); err != nil {
			rows.Close()
			return nil, nil, err
		}
		if i, ok := idx[d]; ok {
			subs[i].GWP[substances.GWPSet(set)] = v
		}
	}
	if err := rows.Err(); err != nil {
		return nil, nil, err
	}

	var blends []substances.Blend
	bidx := map[string]int{}
	rows, err = s.pool.Query(ctx, `SELECT designation, blend_type, safety_class, sources FROM blends ORDER BY designation`)
	if err != nil {
		return nil, nil, err
	}
	for rows.Next() {
		var x substances.Blend
		if err := rows.Scan(&x.Designation, &x.Type, &x.SafetyClass, &x.Sources); err != nil {
			rows.Close()
			return nil, nil, err
		}
		bidx[x.Designation] = len(blends)
		blends = append(blends, x)
	}
	if err := rows.Err(); err != nil {
		return nil, nil, err
	}
	rows, err = s.pool.Query(ctx, `SELECT blend, component, mass_pct, tol_plus, tol_minus
	    FROM blend_components ORDER BY blend, position`)
	if err != nil {
		return nil, nil, err
	}
	for rows.Next() {
		var b string
		var c substances.Component
		if err := rows.Scan(&b, &c.Designation, &c.MassPct, &c.TolPlus, &c.TolMinus); err != nil {
			rows.Close()
			return nil, nil, err
		}
		if i, ok := bidx[b]; ok {
			blends[i].Components = append(blends[i].Components, c)
		}
	}
	if err := rows.Err(); err != nil {
		return nil, nil, err
	}
	rows, err = s.pool.Query(ctx, `SELECT designation, alias, entry_kind FROM aliases ORDER BY designation, alias`)
	if err != nil {
		return nil, nil, err
	}
	for rows.Next() {
		var d, a, kind string
		if err := rows.Scan(&d, &a, &kind); err != nil {
			rows.Close()
			return nil, nil, err
		}
		if kind == "substance" {
			if i, ok := idx[d]; ok {
				subs[i].Synonyms = append(subs[i].Synonyms, a)
			}
		} else if i, ok := bidx[d]; ok {
			blends[i].Synonyms = append(blends[i].Synonyms, a)
		}
	}
	return subs, blends, rows.Err()
}

// UpsertSubstance writes an administrator's substance, records it in the audit log and
// announces the change. It reports whether the substance is new.
func (s *Store) UpsertSubstance(ctx context.Context, x *substances.Substance, reason string) (created bool, err error) {
	// REPEATABLE READ: created is read before the upsert; a substance another
	// transaction inserts in between makes the upsert fail with a serialization failure
	// (instead of updating a row our snapshot did not see), and the retry answers
	// created = false.
	err = s.inTx(ctx, repeatableRead, func(tx pgx.Tx) error {
		var exists bool
		if err := tx.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM substances WHERE designation = $1)`,
			x.Designation).Scan(&exists); err != nil {
			return err
		}
		created = !exists
		b := &pgx.Batch{}
		queueSubstance(b, x, "admin")
		detail, _ := json.Marshal(x)
		action := "update"
		if created {
			action = "create"
		}
		queueAudit(ctx, b, action, "substance", x.Designation, reason, detail)
		b.Queue(`SELECT pg_notify($1, $2)`, CatalogueChannel, x.Designation)
		return tx.SendBatch(ctx, b).Close()
	})
	return created, err
}

// ListenCatalogue calls changed once it listens on CatalogueChannel, then after every
// announced catalogue change, until ctx is done or the connection fails. It holds one
// connection of its own (not from the pool) while it listens. The first call, on every (re)connection, lets the
// caller reload what was announced while nobody listened.
func (s *Store) ListenCatalogue(ctx context.Context, changed func()) error {
	return s.listen(ctx, CatalogueChannel, changed, func(string) { changed() })
}
