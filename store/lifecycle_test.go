package store_test

import (
	"context"
	"errors"
	"testing"
	"time"

	"github.com/halovet/halovet/store"
)

// Amounts in these tests are invented (ODP tonnes on an invented licence); the sums are
// exact because quota arithmetic is done in billionths.

func drawnOn(t *testing.T, st *store.Store, licence string) (drawn, sumLive string) {
	t.Helper()
	ctx := context.Background()
	if err := st.Pool().QueryRow(ctx, `SELECT q.drawn::text,
	        coalesce((SELECT sum(d.amount) FROM quota_draws d JOIN shipments s USING (shipment_id)
	                  WHERE s.state = 'live' AND d.licence_number = q.licence_number), 0)::numeric(30,9)::text
	    FROM quota_lines q WHERE q.licence_number = $1 AND q.line_number = 1`, licence).Scan(&drawn, &sumLive); err != nil {
		t.Fatal(err)
	}
	return drawn, sumLive
}

func auditCountOf(t *testing.T, st *store.Store, action, entity string) int {
	t.Helper()
	var n int
	if err := st.Pool().QueryRow(context.Background(), `SELECT count(*) FROM audit_log WHERE action = $1 AND entity = $2`,
		action, entity).Scan(&n); err != nil {
		t.Fatal(err)
	}
	return n
}

func TestVoidReleasesDrawsExactlyAndKeepsHistory(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1.0)
	res, err := st.RecordShipments(ctx, []store.ShipmentRow{row("a", store.ToNano(0.3)), row("b", store.ToNano(0.45))})
	if err != nil || res[0].Status != store.RecordStored || res[1].Status != store.RecordStored {
		t.Fatalf("record: %+v %v", res, err)
	}
	if d, s := drawnOn(t, st, "L-1"); d != "0.750000000" || s != d {
		t.Fatalf("drawn %s, live draws %s; want 0.750000000 both", d, s)
	}
	got, err := st.VoidShipment(ctx, res[0].ShipmentID, "declared twice by the broker")
	if err != nil {
		t.Fatal(err)
	}
	if got.State != store.StateVoided || got.ChangeReason != "declared twice by the broker" || len(got.Draws) != 1 || !got.Draws[0].Released {
		t.Fatalf("voided shipment: state %s reason %q draws %+v", got.State, got.ChangeReason, got.Draws)
	}
	if d, s := drawnOn(t, st, "L-1"); d != "0.450000000" || s != d {
		t.Fatalf("after void: drawn %s, live draws %s; want 0.450000000 both", d, s)
	}
	// It leaves consumption.
	totals, err := st.ShipmentTotals(ctx, []int{2026})
	if err != nil {
		t.Fatal(err)
	}
	if len(totals) != 1 || totals[0].Shipments != 1 {
		t.Fatalf("totals after void: %+v; want the one live shipment", totals)
	}
	// Voiding twice is refused, nothing changes.
	_, err = st.VoidShipment(ctx, res[0].ShipmentID, "again")
	var se *store.StateError
	if !errors.As(err, &se) || se.State != store.StateVoided || !errors.Is(err, store.ErrConflict) {
		t.Fatalf("second void: %v; want a StateError (voided)", err)
	}
	if d, _ := drawnOn(t, st, "L-1"); d != "0.450000000" {
		t.Fatalf("second void changed drawn to %s", d)
	}
	if _, err := st.VoidShipment(ctx, 999999, "x"); !errors.Is(err, store.ErrNotFound) {
		t.Fatalf("void unknown: %v; want ErrNotFound", err)
	}
	// A retry of the voided record is a replay of it, not a new record.
	again, err := st.RecordShipments(ctx, []store.ShipmentRow{row("a", store.ToNano(0.3))})
	if err != nil || again[0].Status != store.RecordReplayed || again[0].Stored == nil || again[0].Stored.State != store.StateVoided {
		t.Fatalf("retry of a voided record: %+v %v; want replayed, state voided", again, err)
	}
	if n := auditCountOf(t, st, "void", "shipment"); n != 1 {
		t.Fatalf("%d void audit entries, want 1", n)
	}
}

func TestCorrectMovesQuotaAndKeepsBothVersions(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1.0)
	res, err := st.RecordShipments(ctx, []store.ShipmentRow{row("a", store.ToNano(0.6)), row("b", store.ToNano(0.3))})
	if err != nil || res[0].Status != store.RecordStored {
		t.Fatalf("record: %+v %v", res, err)
	}
	// 0.1 left; a correction of a to 0.7 fits because a's own 0.6 comes back first.
	fix := row("a", store.ToNano(0.7))
	fix.Fingerprint = "fp-a-corrected"
	cr, err := st.CorrectShipment(ctx, res[0].ShipmentID, fix, "quantity misread")
	if err != nil || cr.Status != store.RecordStored || cr.ShipmentID == res[0].ShipmentID {
		t.Fatalf("correct: %+v %v", cr, err)
	}
	if b := cr.Balances; len(b) != 1 || b[0].Before != store.ToNano(0.7) || b[0].After != 0 {
		t.Fatalf("correction balances %+v; want 0.7 before and 0 after its own draw", b)
	}
	if d, s := drawnOn(t, st, "L-1"); d != "1.000000000" || s != d {
		t.Fatalf("after correction: drawn %s, live draws %s; want 1.000000000 both", d, s)
	}
	cur, versions, err := st.GetShipment(ctx, res[0].ShipmentID)
	if err != nil {
		t.Fatal(err)
	}
	if cur.State != store.StateSuperseded || len(versions) != 2 || versions[1].Version != 2 || versions[1].PreviousID != res[0].ShipmentID ||
		versions[1].State != store.StateLive || !versions[0].Draws[0].Released {
		t.Fatalf("versions: %+v", versions)
	}
	// A correction that would over-draw changes nothing.
	over := row("b", store.ToNano(0.31))
	over.Fingerprint = "fp-b-over"
	short, err := st.CorrectShipment(ctx, res[1].ShipmentID, over, "more")
	if err != nil || short.Status != store.RecordQuotaShort || short.Remaining != store.ToNano(0.3) {
		t.Fatalf("over-drawing correction: %+v %v; want RecordQuotaShort with 0.3 left", short, err)
	}
	// Correcting a superseded version is refused.
	if _, err := st.CorrectShipment(ctx, res[0].ShipmentID, fix, "again"); !errors.As(err, new(*store.StateError)) {
		t.Fatalf("correcting a superseded version: %v; want a StateError", err)
	}
	// Another key is refused.
	other := row("zz", store.ToNano(0.1))
	if _, err := st.CorrectShipment(ctx, cr.ShipmentID, other, "x"); !errors.Is(err, store.ErrConflict) {
		t.Fatalf("correction with another key: %v; want ErrConflict", err)
	}
	if d, _ := drawnOn(t, st, "L-1"); d != "1.000000000" {
		t.Fatalf("refused corrections changed drawn to %s", d)
	}
	// The old content sent again is a replay of the superseded version.
	again, err := st.RecordShipments(ctx, []store.ShipmentRow{row("a", store.ToNano(0.6))})
	if err != nil || again[0].Status != store.RecordReplayed || again[0].ShipmentID != res[0].ShipmentID {
		t.Fatalf("old content again: %+v %v; want a replay of version 1", again, err)
	}
	list, err := st.ListShipments(ctx, store.ShipmentFilter{RecordKey: "a"})
	if err != nil || len(list) != 2 {
		t.Fatalf("list by key: %d rows %v; want both versions", len(list), err)
	}
	live, err := st.ListShipments(ctx, store.ShipmentFilter{States: []string{store.StateLive}, Limit: 1})
	if err != nil || len(live) != 1 || live[0].RecordKey != "b" {
		t.Fatalf("first live page: %+v %v", live, err)
	}
	next, err := st.ListShipments(ctx, store.ShipmentFilter{States: []string{store.StateLive}, AfterID: live[0].ID})
	if err != nil || len(next) != 1 || next[0].ID != cr.ShipmentID {
		t.Fatalf("second live page: %+v %v", next, err)
	}
}

func TestClosedYearRefusesRecordVoidCorrect(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	issueTestLicence(t, st, "L-1", 1.0)
	res, err := st.RecordShipments(ctx, []store.ShipmentRow{row("a", store.ToNano(0.2))})
	if err != nil || res[0].Status != store.RecordStored {
		t.Fatalf("record: %+v %v", res, err)
	}
	if _, err := st.CloseYear(ctx, 2026, "submitted to the Secretariat"); err != nil {
		t.Fatal(err)
	}
	if _, err := st.CloseYear(ctx, 2026, "twice"); !errors.Is(err, store.ErrYearState) {
		t.Fatalf("closing twice: %v; want ErrYearState", err)
	}
	c, closed, err := st.YearClosed(ctx, 2026)
	if err != nil || !closed || c.Reason != "submitted to the Secretariat" {
		t.Fatalf("YearClosed: %+v %v %v", c, closed, err)
	}
	if _, closed, _ := st.YearClosed(ctx, 2025); closed {
		t.Fatal("2025 reads as closed")
	}
	r2, err := st.RecordShipments(ctx, []store.ShipmentRow{row("b", store.ToNano(0.1))})
	if err != nil || r2[0].Status != store.RecordYearClosed || r2[0].Closed.Year != 2026 {
		t.Fatalf("record in a closed year: %+v %v", r2, err)
	}
	var yc *store.YearClosedError
	if _, err := st.VoidShipment(ctx, res[0].ShipmentID, "x"); !errors.As(err, &yc) {
		t.Fatalf("void in a closed year: %v; want YearClosedError", err)
	}
	fix := row("a", store.ToNano(0.1))
	fix.Fingerprint = "fp-a2"
	if _, err := st.CorrectShipment(ctx, res[0].ShipmentID, fix, "x"); !errors.As(err, &yc) {
		t.Fatalf("correct in a closed year: %v; want YearClosedError", err)
	}
	if d, _ := drawnOn(t, st, "L-1"); d != "0.200000000" {
		t.Fatalf("closed year: drawn %s, want 0.200000000 unchanged", d)
	}
	if err := st.ReopenYear(ctx, 2026, "late correction from customs"); err != nil {
		t.Fatal(err)
	}
	if err := st.ReopenYear(ctx, 2026, "again"); !errors.Is(err, store.ErrYearState) {
		t.Fatalf("reopening an open year: %v; want ErrYearState", err)
	}
	if _, err := st.VoidShipment(ctx, res[0].ShipmentID, "x"); err != nil {
		t.Fatalf("void after reopening: %v", err)
	}
	if auditCountOf(t, st, "close", "reporting_year") != 1 || auditCountOf(t, st, "reopen", "reporting_year") != 1 {
		t.Fatal("close and reopen must each leave one audit entry")
	}
	// A correction moving a record into a closed year is refused as well.
	r3, _ := st.RecordShipments(ctx, []store.ShipmentRow{row("c", store.ToNano(0.1))})
	if _, err := st.CloseYear(ctx, 2025, "closed"); err != nil {
		t.Fatal(err)
	}
	back := row("c", store.ToNano(0.1))
	back.Fingerprint, back.DeclarationDate = "fp-c2", time.Date(2025, 12, 30, 0, 0, 0, 0, time.UTC)
	if cr, err := st.CorrectShipment(ctx, r3[0].ShipmentID, back, "x"); err != nil || cr.Status != store.RecordYearClosed {
		t.Fatalf("correction into a closed year: %+v %v", cr, err)
	}
}
