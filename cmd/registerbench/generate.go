package main

import (
	"context"
	"fmt"

	"github.com/jackc/pgx/v5/pgxpool"
)

// The generated register is INVENTED: companies GEN-0001..GEN-0200, licences GEN-L-*,
// partner countries from the user-assigned codes XA..XZ, a mix of substances and one
// blend, masses from a fixed pseudo-random formula. It exists only to give the reports a
// register of realistic size; nothing in it describes any real trade.
//
// Substance figures used to fill the stored per-component ODP t and CO2-eq t:
//   ODPs: Montreal Protocol Annex C Group I (ODP column): HCFC-22 0.055, HCFC-141b 0.11.
//   GWPs: Kigali Amendment, Annexes C/I and F (GWP columns): HCFC-22 1810, HCFC-141b 725,
//     HFC-134a 1430, HFC-32 675, HFC-125 3500.
//   R-410A: HFC-32/HFC-125 at 50/50 % by mass (ASHRAE 34).

// genSubstances is one row per component kind the generator draws from: a shipment picks
// the row (i*7) % 6; R-410A (kind 5) is two component rows.
const genSubstancesSQL = `(VALUES
    (0, 'HCFC-22',   'HCFC-22',   'C/I', 1.0, 0.055, 1810.0),
    (1, 'HCFC-141b', 'HCFC-141b', 'C/I', 1.0, 0.11,  725.0),
    (2, 'HFC-134a',  'HFC-134a',  'F',   1.0, 0.0,   1430.0),
    (3, 'HFC-32',    'HFC-32',    'F',   1.0, 0.0,   675.0),
    (4, 'HFC-125',   'HFC-125',   'F',   1.0, 0.0,   3500.0),
    (5, 'R-410A',    'HFC-32',    'F',   0.5, 0.0,   675.0),
    (5, 'R-410A',    'HFC-125',   'F',   0.5, 0.0,   3500.0)
  ) AS g(kind, shipped, designation, annex_group, share, odp, gwp)`

// Generate adds n invented live shipments spread evenly over the years firstYear ..
// firstYear+years-1 to the register at pool, with their components, in set-based
// statements (INSERT ... SELECT over generate_series) inside one transaction, then
// ANALYZEs the tables. Record keys are gen-<i>, so a second call with the same n fails on
// the unique key instead of doubling the register.
func Generate(ctx context.Context, pool *pgxpool.Pool, n, firstYear, years int) error {
	if n < 1 || years < 1 {
		return fmt.Errorf("generate: n is %d and years %d; both must be at least 1", n, years)
	}
	tx, err := pool.Begin(ctx)
	if err != nil {
		return err
	}
	defer func() { _ = tx.Rollback(ctx) }()
	// A million rows take longer than the store's per-statement limit.
	if _, err := tx.Exec(ctx, `SET LOCAL statement_timeout = 0`); err != nil {
		return err
	}
	// i picks: year (i % years), day of year, company (i % 200), direction (85 % import,
	// 10 % export, 5 % re-export), purpose (3 % feedstock, else servicing), condition
	// (2 % recycled), partner (26 codes; XZ is treated as a non-Party), substance kind
	// ((i*7) % 6), net mass 10.000 to 9,999.999 kg.
	if _, err := tx.Exec(ctx, `
	    INSERT INTO shipments (company_id, record_key, fingerprint, direction, licence_number, partner_country,
	        declaration_date, year, resolved_designation, entry_kind, purpose, condition, net_mass_kg,
	        odp_tonnes, co2e_tonnes, counts_in_consumption, partner_non_party, record,
	        component_designations, component_annex_groups, component_mass_kg, component_odp_tonnes,
	        component_co2e_tonnes, component_non_party)
	    SELECT 'GEN-' || lpad((i % 200)::text, 4, '0'), 'gen-' || i, md5(i::text), d.direction,
	        'GEN-L-' || (i % 200), 'X' || chr(65 + (i % 26)::int), d.day, extract(year FROM d.day)::int,
	        k.shipped, CASE WHEN k.shipped LIKE 'R-%' THEN 'blend' ELSE 'substance' END,
	        CASE WHEN i % 100 < 3 THEN 'feedstock' ELSE 'servicing' END,
	        CASE WHEN i % 50 = 7 THEN 'recycled' ELSE 'virgin' END,
	        d.kg, d.kg / 1000 * k.odp, d.kg / 1000 * k.gwp,
	        d.direction = 'import' AND i % 100 >= 3, (i % 26) = 25, '{"generated": true}'::jsonb,
	        c.des, c.grp, c.kg, c.odp, c.co2e, c.np
	    FROM generate_series(1, $1::bigint) AS i
	    CROSS JOIN LATERAL (SELECT
	        (make_date($2 + (i % $3)::int, 1, 1) + ((i / $3) % 365)::int) AS day,
	        CASE WHEN i % 20 < 17 THEN 'import' WHEN i % 20 < 19 THEN 'export' ELSE 're-export' END AS direction,
	        round((10 + ((i * 2654435761) % 9989990) / 1000.0)::numeric, 3) AS kg) d
	    CROSS JOIN LATERAL (SELECT shipped, sum(odp * share) AS odp, sum(gwp * share) AS gwp
	        FROM `+genSubstancesSQL+` WHERE kind = (i * 7) % 6 GROUP BY shipped) k
	    CROSS JOIN LATERAL (SELECT array_agg(g.designation ORDER BY g.designation) AS des,
	        array_agg(g.annex_group ORDER BY g.designation) AS grp,
	        array_agg(d.kg * g.share ORDER BY g.designation) AS kg,
	        array_agg(d.kg * g.share / 1000 * g.odp ORDER BY g.designation) AS odp,
	        array_agg(d.kg * g.share / 1000 * g.gwp ORDER BY g.designation) AS co2e,
	        array_agg(NULL::boolean) AS np
	        FROM `+genSubstancesSQL+` WHERE g.kind = (i * 7) % 6) c`,
		n, firstYear, years); err != nil {
		return fmt.Errorf("generating shipments: %w", err)
	}
	if err := tx.Commit(ctx); err != nil {
		return err
	}
	_, err = pool.Exec(ctx, `ANALYZE shipments`)
	return err
}
