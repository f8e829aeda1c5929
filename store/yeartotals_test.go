package store_test

import (
	"context"
	"errors"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/terms"
)

// Quantities here are invented; the check is that the yearly totals (migration 12) equal
// the join over the register after each kind of write, exactly.

// totalsByJoin is ShipmentTotals computed from the register itself.
func totalsByJoin(t *testing.T, st *store.Store) []store.ShipmentTotal {
	t.Helper()
	rows, err := st.Pool().Query(context.Background(), store.ShipmentTotalsJoinSQL, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var out []store.ShipmentTotal
	for rows.Next() {
		var x store.ShipmentTotal
		if err := rows.Scan(&x.Year, &x.Designation, &x.AnnexGroup, &x.Direction, &x.Purpose, &x.Condition,
			&x.PartnerNonParty, &x.Tonnes, &x.Shipments); err != nil {
			t.Fatal(err)
		}
		x.Tonnes = x.Tonnes.Shift(-3) // the join sums kg, as the yearly totals do
		out = append(out, x)
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}

func sameTotals(t *testing.T, st *store.Store, step string, wantShipments int64) {
	t.Helper()
	got, err := st.ShipmentTotals(context.Background(), nil)
	if err != nil {
		t.Fatal(err)
	}
	want := totalsByJoin(t, st)
	if len(got) != len(want) {
		t.Fatalf("%s: %d total rows, the register %d: %+v vs %+v", step, len(got), len(want), got, want)
	}
	var n int64
	for i := range got {
		g, w := got[i], want[i]
		if !g.Tonnes.Equal(w.Tonnes) {
			t.Errorf("%s: total %d = %v t, the register gives %v t", step, i, g.Tonnes, w.Tonnes)
		}
		g.Tonnes, w.Tonnes = exact.Zero, exact.Zero
		if g != w {
			t.Errorf("%s: total %d = %+v, the register gives %+v", step, i, got[i], want[i])
		}
		n += got[i].Shipments
	}
	if n != wantShipments {
		t.Errorf("%s: %d component rows counted, want %d", step, n, wantShipments)
	}
	rep, err := st.CheckInvariants(context.Background())
	if err != nil || len(rep.Breaches) > 0 {
		t.Errorf("%s: CheckInvariants = %+v, %v; want no breach", step, rep.Breaches, err)
	}
}

// mrow is row with a component mass (kg) beside its ODP t, so that the totals sum masses.
func mrow(key string, odpNano store.Nano, kg float64) store.ShipmentRow {
	r := row(key, odpNano)
	r.NetMassKg = store.ToNano(kg)
	r.Components[0].MassKg = store.ToNano(kg)
	return r
}

func TestYearTotalsFollowRecordVoidCorrect(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1.0)
	sameTotals(t, st, "empty register", 0)
	res, err := st.RecordShipments(ctx, []store.ShipmentRow{mrow("a", store.ToNano(0.3), 5454.545454545), mrow("b", store.ToNano(0.45), 8181.818181818), mrow("c", store.ToNano(0.1), 1818.181818182)})
	if err != nil || res[0].Status != store.RecordStored || res[2].Status != store.RecordStored {
		t.Fatalf("record: %+v %v", res, err)
	}
	sameTotals(t, st, "after recording three", 3)
	if _, err := st.VoidShipment(ctx, res[0].ShipmentID, "declared twice"); err != nil {
		t.Fatal(err)
	}
	sameTotals(t, st, "after voiding one", 2)
	fix := mrow("b", store.ToNano(0.5), 9090.909090909)
	fix.Fingerprint = "fp-b-corrected"
	if cr, err := st.CorrectShipment(ctx, res[1].ShipmentID, fix, "quantity misread"); err != nil || cr.Status != store.RecordStored {
		t.Fatalf("correct: %+v %v", cr, err)
	}
	sameTotals(t, st, "after correcting one", 2)

	// Nothing deletes recorded shipments or their components: refused, totals unchanged.
	for _, sql := range []string{`DELETE FROM shipments`, `DELETE FROM shipment_components`, `UPDATE shipment_components SET mass_kg = mass_kg + 1`} {
		if _, err := st.Pool().Exec(ctx, sql); err == nil {
			t.Errorf("%s succeeded; want it refused", sql)
		}
	}
	sameTotals(t, st, "after the refused deletes", 2)
	// A direct update of a grouped column of a live shipment moves its totals.
	if _, err := st.Pool().Exec(ctx, `UPDATE shipments SET purpose = 'feedstock' WHERE shipment_id = $1`, res[2].ShipmentID); err != nil {
		t.Fatal(err)
	}
	sameTotals(t, st, "after a direct update of a purpose", 2)
	tots, err := st.ShipmentTotals(ctx, nil)
	if err != nil || len(tots) != 2 || tots[0].Purpose != terms.PurposeUnspecified || tots[1].Purpose != terms.PurposeFeedstock || !tots[1].Tonnes.Equal(num("1.818181818182")) {
		t.Fatalf("totals after the purpose update: %+v %v; want b under no purpose and c's 1.818181818182 t under feedstock", tots, err)
	}
	// TRUNCATE empties the totals with the register.
	if _, err := st.Pool().Exec(ctx, `TRUNCATE shipments CASCADE`); err != nil {
		t.Fatal(err)
	}
	var left int
	if err := st.Pool().QueryRow(ctx, `SELECT count(*) FROM shipment_year_totals`).Scan(&left); err != nil || left != 0 {
		t.Fatalf("after TRUNCATE: %d totals rows (%v), want 0", left, err)
	}
}

// The keys of the tables migration 13 folded into the shipment's row (one component per
// designation, one draw per quota line) hold in the schema, whoever writes.
func TestShipmentRowRefusesRepeatedComponentsAndDraws(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1.0)
	res, err := st.RecordShipments(ctx, []store.ShipmentRow{mrow("a", store.ToNano(0.3), 100)})
	if err != nil || res[0].Status != store.RecordStored {
		t.Fatalf("record: %+v %v", res, err)
	}
	id := res[0].ShipmentID
	for _, c := range []struct{ sql, constraint string }{
		{`UPDATE shipments SET component_designations = component_designations || component_designations,
		     component_annex_groups = component_annex_groups || component_annex_groups,
		     component_mass_kg = component_mass_kg || component_mass_kg,
		     component_odp_tonnes = component_odp_tonnes || component_odp_tonnes,
		     component_co2e_tonnes = component_co2e_tonnes || component_co2e_tonnes,
		     component_non_party = component_non_party || component_non_party
		   WHERE shipment_id = $1`, "shipments_components_distinct"},
		{`UPDATE shipments SET draw_lines = draw_lines || draw_lines, draw_amounts = draw_amounts || draw_amounts
		   WHERE shipment_id = $1`, "shipments_draws_distinct"},
	} {
		_, err := st.Pool().Exec(ctx, c.sql, id)
		var pe *pgconn.PgError
		if !errors.As(err, &pe) || pe.Code != "23514" || pe.ConstraintName != c.constraint {
			t.Errorf("repeating the arrays: %v; want check_violation of %s", err, c.constraint)
		}
	}
}

// Migration 14 made elements_distinct, which the two constraints above call on every row
// written, an expression the planner inlines; it must answer as the query of migration 13
// (kept as elements_distinct_scan) on every array: NULL, empty, every text and integer
// array of up to five elements over three values and NULL (duplicates and NULL elements in
// every position), and arrays of another lower bound or of two dimensions.
func TestElementsDistinctMatchesTheScan(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	for _, c := range []struct{ typ, values string }{
		{"text", `'a', 'b', 'HFC-125', NULL`},
		{"integer", `1, 2, 3, NULL`},
	} {
		var n, differ int
		var example pgtype.Text
		q := `WITH RECURSIVE v(e) AS (SELECT unnest(ARRAY[` + c.values + `]::` + c.typ + `[])),
		    arrays(a) AS (SELECT '{}'::` + c.typ + `[] UNION ALL SELECT a || e FROM arrays, v WHERE cardinality(a) < 5),
		    every(a) AS (SELECT a FROM arrays
		        UNION ALL SELECT NULL::` + c.typ + `[]
		        UNION ALL SELECT '[0:1]={1,2}'::` + c.typ + `[] UNION ALL SELECT '[0:1]={1,1}'::` + c.typ + `[]
		        UNION ALL SELECT '[2:2]={1}'::` + c.typ + `[]
		        UNION ALL SELECT '{{1,2},{3,1}}'::` + c.typ + `[] UNION ALL SELECT '{{1,2},{3,4}}'::` + c.typ + `[])
		    SELECT count(*), count(*) FILTER (WHERE elements_distinct(a) IS DISTINCT FROM elements_distinct_scan(a)),
		        min(a::text) FILTER (WHERE elements_distinct(a) IS DISTINCT FROM elements_distinct_scan(a))
		    FROM every`
		if err := st.Pool().QueryRow(ctx, q).Scan(&n, &differ, &example); err != nil {
			t.Fatalf("%s arrays: %v", c.typ, err)
		}
		// 1 + 4 + 16 + 64 + 256 + 1024 arrays of up to five elements, and 6 more.
		if n != 1365+6 || differ != 0 {
			t.Errorf("%s: %d arrays compared, %d answered differently (e.g. %q); want 1371, 0", c.typ, n, differ, example.String)
		}
	}
	// The point of migration 14: the constraint's function is inlined (a CASE over the
	// row's own array), not run as a query per row.
	var plan string
	if err := st.Pool().QueryRow(ctx, `EXPLAIN (VERBOSE, FORMAT JSON) SELECT elements_distinct(component_designations) FROM shipments`).Scan(&plan); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(plan, "elements_distinct(") || !strings.Contains(plan, "CASE WHEN") {
		t.Errorf("elements_distinct is not inlined: %s", plan)
	}
}
