package store

import (
	"context"
	"fmt"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/terms"
)

// ShipmentTotalsSQL is ShipmentTotals' query ($1: the years, NULL for every year): it
// reads the yearly totals the triggers of migration 12 keep in the transactions that
// record, void and correct shipments. Exported for cmd/registerbench's plans.
const ShipmentTotalsSQL = `SELECT year, designation, annex_group, direction, purpose, condition, non_party,
	        mass_kg, components
	    FROM shipment_year_totals
	    WHERE ($1::int[] IS NULL OR year = ANY($1)) AND components > 0
	    ORDER BY year, designation, direction, purpose, condition, non_party, annex_group`

// ShipmentTotalsJoinSQL computes the same rows as ShipmentTotalsSQL from the register
// itself, joining every live shipment with its components: the query ShipmentTotals ran
// before the yearly totals, kept as cmd/registerbench's baseline and for the tests that
// compare the totals with the register (CheckInvariants runs the same sums).
const ShipmentTotalsJoinSQL = `SELECT s.year, c.designation, c.annex_group, s.direction, s.purpose,
	        s.condition, coalesce(c.partner_non_party, s.partner_non_party) AS non_party, sum(c.mass_kg), count(*)
	    FROM shipments s JOIN shipment_components c ON c.shipment_id = s.shipment_id
	    WHERE ($1::int[] IS NULL OR s.year = ANY($1)) AND s.state = 'live'
	    GROUP BY s.year, c.designation, c.annex_group, s.direction, s.purpose, s.condition, non_party
	    ORDER BY s.year, c.designation, s.direction, s.purpose, s.condition, non_party, c.annex_group`

// ShipmentYearsSQL is ShipmentYears' query, exported for cmd/registerbench's plans.
const ShipmentYearsSQL = `WITH RECURSIVE y(year) AS (
	        SELECT min(year) FROM shipments WHERE state = 'live'
	      UNION ALL
	        SELECT (SELECT min(year) FROM shipments WHERE year > y.year AND state = 'live') FROM y WHERE y.year IS NOT NULL)
	    SELECT year FROM y WHERE year IS NOT NULL ORDER BY year`

// ShipmentTotal is the mass of one substance (a shipment's single substance or one blend
// component) in the recorded shipments of one year that share direction, purpose,
// condition and partner status: what the consumption arithmetic needs, summed by
// PostgreSQL so that a year of a million shipments never travels row by row.
type ShipmentTotal struct {
	Year            int
	Designation     string // component designation
	AnnexGroup      string // the group recorded with the component ("" when uncontrolled)
	Direction       terms.Direction
	Purpose         terms.Purpose
	Condition       terms.Condition
	PartnerNonParty bool          // the partner was not bound for this component's group
	Tonnes          exact.Decimal // sum of the components' net mass, metric tonnes, exact
	Shipments       int64         // shipments contributing
}

// ShipmentTotals sums the recorded shipment components per year, substance, direction,
// purpose, condition and partner status, for the given years (every year when years is
// nil). The sums are exact numeric sums in kg, converted to tonnes as the last step.
func (s *Store) ShipmentTotals(ctx context.Context, years []int) (_ []ShipmentTotal, err error) {
	return s.reader().ShipmentTotals(ctx, years)
}

// ShipmentTotals is Store.ShipmentTotals within the reader's transaction, if any.
func (r Reader) ShipmentTotals(ctx context.Context, years []int) (_ []ShipmentTotal, err error) {
	defer classifyInto(&err)
	// Party status is per component group (migration 5); rows without it take the
	// shipment's flag.
	rows, err := r.q.Query(ctx, ShipmentTotalsSQL, intsOrNil(years))
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []ShipmentTotal
	for rows.Next() {
		var t ShipmentTotal
		if err := rows.Scan(&t.Year, &t.Designation, &t.AnnexGroup, &t.Direction, &t.Purpose, &t.Condition,
			&t.PartnerNonParty, &t.Tonnes, &t.Shipments); err != nil {
			return nil, err
		}
		t.Tonnes = t.Tonnes.Shift(-3) // kg read as numeric text, to tonnes exactly
		out = append(out, t)
	}
	return out, rows.Err()
}

// ShipmentYears returns, in order, the years in which at least one live shipment is recorded.
// It walks the year index one distinct value at a time (a recursive skip scan), so its
// cost grows with the number of years, not of shipments.
func (s *Store) ShipmentYears(ctx context.Context) (_ []int, err error) {
	return s.reader().ShipmentYears(ctx)
}

// ShipmentYears is Store.ShipmentYears within the reader's transaction, if any.
func (r Reader) ShipmentYears(ctx context.Context) (_ []int, err error) {
	defer classifyInto(&err)
	rows, err := r.q.Query(ctx, ShipmentYearsSQL)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []int
	for rows.Next() {
		var y int
		if err := rows.Scan(&y); err != nil {
			return nil, err
		}
		out = append(out, y)
	}
	return out, rows.Err()
}

// CompanyAmount is one company's amount in one year.
type CompanyAmount struct {
	CompanyID string
	Year      int
	Amount    exact.Decimal // exact numeric sum, in the unit asked for
}

// CompanyImports sums, per company and year, the recorded imports that count in
// consumption (counts_in_consumption) of the components in the given Annex groups, in a
// quota unit: metric tonnes (component mass), ODP or CO2-eq tonnes (the figures computed
// when the shipment was recorded).
func (s *Store) CompanyImports(ctx context.Context, groups []string, unit terms.QuotaUnit, years []int) (_ []CompanyAmount, err error) {
	return s.reader().CompanyImports(ctx, groups, unit, years)
}

// CompanyImports is Store.CompanyImports within the reader's transaction, if any.
func (r Reader) CompanyImports(ctx context.Context, groups []string, unit terms.QuotaUnit, years []int) (_ []CompanyAmount, err error) {
	defer classifyInto(&err)
	var expr string
	switch unit {
	case terms.QuotaMetricTonnes:
		expr = "c.mass_kg" // kilograms: tonnes in Go, exactly (Shift(-3))
	case terms.QuotaODPTonnes:
		expr = "c.odp_tonnes"
	case terms.QuotaCO2eTonnes:
		expr = "c.co2e_tonnes"
	default:
		return nil, fmt.Errorf("company imports: unit %q; accepted: metric-t, odp-t, co2e-t", unit)
	}
	// The components are unnested from the rows scanned (migration 13), not joined back
	// through the shipment_components view: one scan of the register, no hash join.
	rows, err := r.q.Query(ctx, `SELECT company_id, year, sum(`+expr+`)
	    FROM (SELECT s.company_id, s.year, unnest(s.component_annex_groups) AS annex_group,
	            unnest(s.component_mass_kg) AS mass_kg, unnest(s.component_odp_tonnes) AS odp_tonnes,
	            unnest(s.component_co2e_tonnes) AS co2e_tonnes
	        FROM shipments s
	        WHERE s.direction = 'import' AND s.counts_in_consumption AND s.state = 'live' AND s.year = ANY($2)) c
	    WHERE c.annex_group = ANY($1)
	    GROUP BY company_id, year ORDER BY company_id, year`, groups, intsOrNil(years))
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []CompanyAmount
	for rows.Next() {
		var a CompanyAmount
		if err := rows.Scan(&a.CompanyID, &a.Year, &a.Amount); err != nil {
			return nil, err
		}
		if unit == terms.QuotaMetricTonnes {
			a.Amount = a.Amount.Shift(-3)
		}
		out = append(out, a)
	}
	return out, rows.Err()
}

// ShipmentLine is the mass of one substance in the recorded shipments of one year that
// share partner, direction, purpose, condition and partner status, with the ids of the
// shipments behind it: what the annual data report lists and traces.
type ShipmentLine struct {
	Year            int
	PartnerCountry  string
	Designation     string
	AnnexGroup      string
	Direction       terms.Direction
	Purpose         terms.Purpose
	Condition       terms.Condition
	PartnerNonParty bool
	Tonnes          exact.Decimal // exact numeric sum in kg, converted to tonnes as the last step
	ShipmentIDs     []int64       // in order
}

// ShipmentLines sums the recorded shipment components of one year per partner, substance,
// direction, purpose, condition and partner status, in the database, and lists the
// shipment ids of each sum. It must read the same rows as ShipmentTotals (any filter of
// which shipments count belongs in both): the service's TestYearReportByHand compares the
// report's totals with the consumption report's.
func (s *Store) ShipmentLines(ctx context.Context, year int) (_ []ShipmentLine, err error) {
	return s.reader().ShipmentLines(ctx, year)
}

// ShipmentLines is Store.ShipmentLines within the reader's transaction, if any.
func (r Reader) ShipmentLines(ctx context.Context, year int) (_ []ShipmentLine, err error) {
	defer classifyInto(&err)
	// Components unnested from the rows scanned (migration 13), as in CompanyImports.
	rows, err := r.q.Query(ctx, `SELECT c.year, c.partner_country, c.designation, c.annex_group, c.direction,
	        c.purpose, c.condition, coalesce(c.np, c.partner_non_party) AS non_party,
	        sum(c.mass_kg), array_agg(c.shipment_id ORDER BY c.shipment_id)
	    FROM (SELECT s.shipment_id, s.year, s.partner_country, s.direction, s.purpose, s.condition, s.partner_non_party,
	            unnest(s.component_designations) AS designation, unnest(s.component_annex_groups) AS annex_group,
	            unnest(s.component_mass_kg) AS mass_kg, unnest(s.component_non_party) AS np
	        FROM shipments s WHERE s.year = $1 AND s.state = 'live') c
	    GROUP BY c.year, c.partner_country, c.designation, c.annex_group, c.direction, c.purpose, c.condition, non_party
	    ORDER BY c.partner_country, c.designation, c.direction, c.purpose, c.condition, non_party`, year)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []ShipmentLine
	for rows.Next() {
		var l ShipmentLine
		if err := rows.Scan(&l.Year, &l.PartnerCountry, &l.Designation, &l.AnnexGroup, &l.Direction,
			&l.Purpose, &l.Condition, &l.PartnerNonParty, &l.Tonnes, &l.ShipmentIDs); err != nil {
			return nil, err
		}
		l.Tonnes = l.Tonnes.Shift(-3)
		out = append(out, l)
	}
	return out, rows.Err()
}
