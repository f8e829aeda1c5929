package store

import (
	"context"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/terms"
)

// keyRow is an invented shipment of company XA-1 on licence L-1 (seedLicence).
func keyRow(key string) ShipmentRow {
	amount := ToNano(0.001)
	return ShipmentRow{CompanyID: "XA-1", RecordKey: key, Fingerprint: "fp-" + key, Direction: terms.DirectionImport,
		LicenceNumber: "L-1", PartnerCountry: "XB", DeclarationDate: time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC),
		ResolvedDesignation: "HCFC-22", EntryKind: "substance", NetMassKg: amount, ODPTonnes: amount,
		CountsInConsumption: true, RecordJSON: []byte(`{}`),
		Components: []ShipmentComponent{{Designation: "HCFC-22", AnnexGroup: "C/I", ODPTonnes: amount}},
		Draws:      []Draw{{LicenceNumber: "L-1", LineNumber: 1, Amount: amount}}}
}

// genericPlan is the plan PostgreSQL caches for storedKeysQuery on the session of q (the
// generic plan, the one a prepared statement keeps), as EXPLAIN prints it.
func genericPlan(t *testing.T, q *pgx.Conn) string {
	t.Helper()
	ctx := context.Background()
	if _, err := q.Exec(ctx, `PREPARE key_probe(text[], text[]) AS `+storedKeysQuery); err != nil {
		t.Fatalf("prepare: %v", err)
	}
	defer q.Exec(ctx, `DEALLOCATE key_probe`) //nolint:errcheck // the session ends with the test
	rows, err := q.Query(ctx, `EXPLAIN (COSTS OFF) EXECUTE key_probe('{XA-1}', '{K-1}')`, pgx.QueryExecModeSimpleProtocol)
	if err != nil {
		t.Fatalf("explain: %v", err)
	}
	lines, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		t.Fatalf("explain: %v", err)
	}
	return strings.Join(lines, "\n")
}

// TestStoredKeyPlanIsAnIndexProbe holds the key-lookup pool's cached plan to one probe of
// the unique index (company_id, record_key, version) per key, whatever the register held
// when the plan was made: empty, or a few rows just analysed, where the planner on its own
// would cache a sequential scan (checked here too, on a session without the pool's
// settings) and keep it while the register grows until the next ANALYZE. The lookup still
// finds rows recorded after its plan was cached.
func TestStoredKeyPlanIsAnIndexProbe(t *testing.T) {
	st, url := openInternal(t)
	seedLicence(t, st)
	ctx := context.Background()
	kc, err := st.keys.Acquire(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer kc.Release()
	for k, want := range keyLookupSettings {
		var got string
		if err := kc.QueryRow(ctx, `SELECT current_setting($1)`, k).Scan(&got); err != nil || got != want {
			t.Fatalf("key-lookup session: %s = %q (%v); want %q", k, got, err, want)
		}
	}
	probe := func(what string) {
		t.Helper()
		plan := genericPlan(t, kc.Conn())
		if !strings.Contains(plan, "Index Scan using shipments_key_version on shipments") ||
			strings.Contains(plan, "Seq Scan on shipments") || strings.Contains(plan, "Bitmap") {
			t.Fatalf("%s: the key lookup's cached plan is not one probe of shipments_key_version per key:\n%s", what, plan)
		}
	}
	probe("empty register")

	if _, err := st.RecordShipments(ctx, []ShipmentRow{keyRow("K-1"), keyRow("K-2"), keyRow("K-3")}); err != nil {
		t.Fatal(err)
	}
	raw := rawConn(t, url)
	if _, err := raw.Exec(ctx, `ANALYZE shipments`); err != nil {
		t.Fatal(err)
	}
	if _, err := raw.Exec(ctx, `SET plan_cache_mode = force_generic_plan`); err != nil {
		t.Fatal(err)
	}
	if plan := genericPlan(t, raw); !strings.Contains(plan, "Seq Scan on shipments") {
		t.Fatalf("precondition: on a session without the key pool's settings, the generic plan over three analysed rows should scan the table; it is:\n%s", plan)
	}
	probe("three rows, analysed")

	// The statement, once cached, still answers from the register as committed when it
	// runs: keys recorded after its first executions are found.
	for i := 0; i < 8; i++ { // past the executions after which PostgreSQL settles on a plan
		got, err := st.StoredRecords(ctx, [][2]string{{"XA-1", "K-1"}, {"XA-1", "K-9"}})
		if err != nil || len(got[[2]string{"XA-1", "K-1"}]) != 1 || len(got[[2]string{"XA-1", "K-9"}]) != 0 {
			t.Fatalf("lookup %d: %v (%v); want K-1 once and no K-9", i, got, err)
		}
	}
	var more []ShipmentRow
	for i := 4; i <= 400; i++ {
		more = append(more, keyRow(fmt.Sprintf("K-%d", i)))
	}
	if _, err := st.RecordShipments(ctx, more); err != nil {
		t.Fatal(err)
	}
	got, err := st.StoredRecords(ctx, [][2]string{{"XA-1", "K-9"}, {"XA-1", "K-400"}, {"XA-1", "K-401"}})
	if err != nil || len(got[[2]string{"XA-1", "K-9"}]) != 1 || len(got[[2]string{"XA-1", "K-400"}]) != 1 || len(got) != 2 {
		t.Fatalf("after recording 397 more: %v (%v); want K-9 and K-400 once each, no K-401", got, err)
	}
}
