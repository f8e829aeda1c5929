package store

import (
	"context"
	"fmt"
)

// Breach is one stored fact that contradicts an invariant of the ledger.
type Breach struct {
	Invariant string // short name of the invariant, e.g. "drawn-equals-draws"
	Subject   string // what it is about: "licence L line 2", "shipment C/K"
	Detail    string // the figures that disagree
}

// InvariantReport is what CheckInvariants looked at and what it found.
type InvariantReport struct {
	QuotaLines int64 // quota lines checked
	Draws      int64 // quota draws checked
	Breaches   []Breach
}

// drawTolerance absorbs the rounding of per-component figures to the store's 10^-9 step:
// a draw sums a shipment's component figures, each rounded once.
const drawTolerance = "0.00000001"

// CheckInvariants verifies, in one read-only snapshot, that for every quota line drawn
// equals the exact sum of its draws and lies between 0 and the allocation, and that every
// draw of a recorded shipment is on the shipment's own licence and no larger than the
// shipment's figure (metric t, ODP t or CO2-eq t) for the components in the line's scope,
// and that the yearly totals (migration 12) equal the sums over the live shipments' components.
// The checks are independent of the code that records shipments: they read the tables.
func (s *Store) CheckInvariants(ctx context.Context) (_ InvariantReport, err error) {
	defer classifyInto(&err)
	var rep InvariantReport
	// REPEATABLE READ, READ ONLY: every check reads the same snapshot, so that lines and
	// draws committed meanwhile cannot look like a breach.
	tx, err := s.pool.Begin(ctx)
	if err != nil {
		return rep, fmt.Errorf("invariants: %w", err)
	}
	defer func() { _ = tx.Rollback(ctx) }()
	if _, err := tx.Exec(ctx, `SET TRANSACTION ISOLATION LEVEL REPEATABLE READ, READ ONLY`); err != nil {
		return rep, fmt.Errorf("invariants: %w", err)
	}
	if err := tx.QueryRow(ctx, `SELECT (SELECT count(*) FROM quota_lines), (SELECT count(*) FROM quota_draws)`).Scan(&rep.QuotaLines, &rep.Draws); err != nil {
		return rep, fmt.Errorf("invariants: counting: %w", err)
	}
	add := func(inv, subject, detail string) {
		rep.Breaches = append(rep.Breaches, Breach{Invariant: inv, Subject: subject, Detail: detail})
	}

	rows, err := tx.Query(ctx, `SELECT q.licence_number, q.line_number, q.allocated::text, q.drawn::text,
	        COALESCE(sum(d.amount), 0)::text, q.drawn = COALESCE(sum(d.amount), 0), q.drawn >= 0 AND q.drawn <= q.allocated
	    FROM quota_lines q LEFT JOIN quota_draws d USING (licence_number, line_number)
	    GROUP BY q.licence_number, q.line_number, q.allocated, q.drawn
	    HAVING q.drawn <> COALESCE(sum(d.amount), 0) OR q.drawn < 0 OR q.drawn > q.allocated
	    ORDER BY 1, 2`)
	if err != nil {
		return rep, fmt.Errorf("invariants: quota lines: %w", err)
	}
	for rows.Next() {
		var lic, alloc, drawn, sum string
		var line int
		var equal, within bool
		if err := rows.Scan(&lic, &line, &alloc, &drawn, &sum, &equal, &within); err != nil {
			rows.Close()
			return rep, fmt.Errorf("invariants: quota lines: %w", err)
		}
		subject := fmt.Sprintf("licence %s line %d", lic, line)
		if !equal {
			add("drawn-equals-draws", subject, fmt.Sprintf("drawn %s, the draws sum to %s", drawn, sum))
		}
		if !within {
			add("drawn-within-allocation", subject, fmt.Sprintf("drawn %s, allocated %s", drawn, alloc))
		}
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return rep, fmt.Errorf("invariants: quota lines: %w", err)
	}

	// The yearly totals (migration 12) equal the sums over the register, exactly.
	rows, err = tx.Query(ctx, `WITH t AS (SELECT year, designation, annex_group, direction, purpose, condition, non_party, mass_kg, components
	            FROM shipment_year_totals WHERE components > 0 OR mass_kg <> 0)
	    SELECT coalesce(j.year, t.year), coalesce(j.designation, t.designation), coalesce(j.direction, t.direction),
	        coalesce(j.purpose, t.purpose), coalesce(j.condition, t.condition), coalesce(j.non_party, t.non_party),
	        coalesce(sum_kg, 0)::text, coalesce(j.count, 0), coalesce(t.mass_kg, 0)::text, coalesce(t.components, 0)
	    FROM (SELECT s.year, c.designation, c.annex_group, s.direction, s.purpose, s.condition,
	            coalesce(c.partner_non_party, s.partner_non_party) AS non_party, sum(c.mass_kg) AS sum_kg, count(*)
	        FROM shipments s JOIN shipment_components c ON c.shipment_id = s.shipment_id WHERE s.state = 'live'
	        GROUP BY 1, 2, 3, 4, 5, 6, 7) j
	    FULL JOIN t ON (t.year, t.designation, t.annex_group, t.direction, t.purpose, t.condition, t.non_party)
	        = (j.year, j.designation, j.annex_group, j.direction, j.purpose, j.condition, j.non_party)
	    WHERE coalesce(sum_kg, 0) <> coalesce(t.mass_kg, 0) OR coalesce(j.count, 0) <> coalesce(t.components, 0)
	    ORDER BY 1, 2, 3, 4, 5, 6`)
	if err != nil {
		return rep, fmt.Errorf("invariants: yearly totals: %w", err)
	}
	for rows.Next() {
		var year int
		var des, dir, purpose, cond, regKg, totKg string
		var nonParty bool
		var regN, totN int64
		if err := rows.Scan(&year, &des, &dir, &purpose, &cond, &nonParty, &regKg, &regN, &totKg, &totN); err != nil {
			rows.Close()
			return rep, fmt.Errorf("invariants: yearly totals: %w", err)
		}
		add("year-totals-match-register", fmt.Sprintf("%d %s %s purpose %q condition %q non-Party %t", year, des, dir, purpose, cond, nonParty),
			fmt.Sprintf("the register sums %s kg in %d component rows, the yearly totals %s kg in %d", regKg, regN, totKg, totN))
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return rep, fmt.Errorf("invariants: yearly totals: %w", err)
	}

	rows, err = tx.Query(ctx, `SELECT company_id, record_key, shipment_licence, licence_number, line_number, amount::text, in_scope::text
	    FROM (SELECT s.company_id, s.record_key, s.licence_number AS shipment_licence, d.licence_number, d.line_number, d.amount,
	            COALESCE((SELECT sum(CASE q.unit WHEN 'metric-t' THEN c.mass_kg / 1000 WHEN 'odp-t' THEN c.odp_tonnes ELSE c.co2e_tonnes END)
	                FROM shipment_components c
	                WHERE c.shipment_id = d.shipment_id
	                  AND ((q.annex_group <> '' AND c.annex_group = q.annex_group) OR (q.substance <> '' AND c.designation = q.substance))), 0) AS in_scope
	        FROM quota_draws d
	        JOIN shipments s ON s.shipment_id = d.shipment_id
	        JOIN quota_lines q ON q.licence_number = d.licence_number AND q.line_number = d.line_number) x
	    WHERE licence_number <> shipment_licence OR amount > in_scope + `+drawTolerance+`::numeric OR amount < 0
	    ORDER BY 1, 2, 4, 5`)
	if err != nil {
		return rep, fmt.Errorf("invariants: draws: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var company, key, shipLic, lic, amount, inScope string
		var line int
		if err := rows.Scan(&company, &key, &shipLic, &lic, &line, &amount, &inScope); err != nil {
			return rep, fmt.Errorf("invariants: draws: %w", err)
		}
		subject := fmt.Sprintf("shipment %s/%s", company, key)
		if lic != shipLic {
			add("draw-on-own-licence", subject, fmt.Sprintf("draws on licence %s line %d; the shipment names licence %q", lic, line, shipLic))
			continue
		}
		add("draw-matches-figures", subject, fmt.Sprintf("draws %s on licence %s line %d; its components in the line's scope amount to %s", amount, lic, line, inScope))
	}
	return rep, rows.Err()
}
