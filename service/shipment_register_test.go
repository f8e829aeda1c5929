package service_test

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"net/http"
	"slices"
	"strings"
	"sync"
	"sync/atomic"
	"testing"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// The register of recorded shipments through the API, on the invented registry of
// shipment_test.go (licence shipLicence: Annex C/I 1 ODP t, Annex F/I 10,000 CO2-eq t).
// Figures: HCFC-22 has ODP 0.055 (Montreal Protocol Annex C Group I), so 100 kg is
// 0.0055 ODP t and 1 t is 0.055 ODP t; R-410A is 2087.5 CO2-eq t per tonne (Annex F GWPs
// of HFC-32 675 and HFC-125 3500, 50/50 by ASHRAE 34).

// wantStatus asserts the status code and that the BadRequest detail names field.
func wantStatus(t *testing.T, what string, err error, code codes.Code, field string) *status.Status {
	t.Helper()
	st, _ := status.FromError(err)
	if err == nil || st.Code() != code {
		t.Fatalf("%s: %v; want %v", what, err, code)
	}
	if field != "" && !slices.Contains(catalogueViolatedFields(st), field) {
		t.Fatalf("%s: %v names fields %v; want %q among them", what, st.Message(), catalogueViolatedFields(st), field)
	}
	return st
}

// registerSums returns, per licence line 1, the amount drawn and the sum of the live
// shipments' draws, as numeric text.
func registerSums(t *testing.T, st *store.Store, licence string, line int) (drawn, live string) {
	t.Helper()
	if err := st.Pool().QueryRow(context.Background(), `SELECT q.drawn::text,
	        coalesce((SELECT sum(d.amount) FROM quota_draws d JOIN shipments s USING (shipment_id)
	                  WHERE s.state = 'live' AND d.licence_number = q.licence_number AND d.line_number = q.line_number), 0)::numeric(30,9)::text
	    FROM quota_lines q WHERE q.licence_number = $1 AND q.line_number = $2`, licence, line).Scan(&drawn, &live); err != nil {
		t.Fatal(err)
	}
	return drawn, live
}

func TestShipmentLifecycleAPI(t *testing.T) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	ctx := context.Background()

	a := shipRecord("L-1") // 0.0055 ODP t
	b := shipRecord("L-2")
	b.TotalNetQuantity, b.QuantityUnit = "2", "t" // 0.11 ODP t
	c := shipRecord("L-3")
	c.Substance, c.TotalNetQuantity, c.QuantityUnit = "R-410A", "1", "t" // 2087.5 CO2-eq t
	vs, _ := shipRecordCall(t, client, a, b, c)
	for i, v := range vs {
		if !v.GetRecorded() || v.GetShipmentId() == 0 || v.GetState() != halovetv1.ShipmentState_SHIPMENT_STATE_LIVE || v.GetRecordedAt() == "" {
			t.Fatalf("record %d: %v; want recorded, with its id, state and time", i, v)
		}
	}
	if d, l := registerSums(t, st, shipLicence, 1); d != "0.115500000" || l != d {
		t.Fatalf("C/I drawn %s, live draws %s; want 0.115500000", d, l)
	}

	t.Run("list with filters and pages", func(t *testing.T) {
		all, err := client.ListShipments(ctx, &halovetv1.ListShipmentsRequest{CompanyId: shipCompany, Year: 2026})
		if err != nil || len(all.GetShipments()) != 3 || all.GetNextPageToken() != "" {
			t.Fatalf("list: %v %v; want 3 on one page", all, err)
		}
		f, err := client.ListShipments(ctx, &halovetv1.ListShipmentsRequest{AnnexGroup: "F"})
		if err != nil || len(f.GetShipments()) != 1 || f.GetShipments()[0].GetRecord().GetRecordKey() != "L-3" {
			t.Fatalf("Annex F: %v %v; want L-3 alone", f, err)
		}
		sub, err := client.ListShipments(ctx, &halovetv1.ListShipmentsRequest{Substance: "R-22"}) // R-22 names HCFC-22 (ASHRAE 34)
		if err != nil || len(sub.GetShipments()) != 2 {
			t.Fatalf("substance R-22: %d %v; want the two HCFC-22 shipments", len(sub.GetShipments()), err)
		}
		none, err := client.ListShipments(ctx, &halovetv1.ListShipmentsRequest{PartnerCountry: "QM", Direction: halovetv1.Direction_DIRECTION_IMPORT})
		if err != nil || len(none.GetShipments()) != 0 {
			t.Fatalf("partner QM: %v %v; want none", none, err)
		}
		var keys []string
		req := &halovetv1.ListShipmentsRequest{LicenceNumber: shipLicence, PageSize: 2}
		for page := 0; ; page++ {
			resp, err := client.ListShipments(ctx, req)
			if err != nil || page > 3 {
				t.Fatalf("page %d: %v", page, err)
			}
			for _, s := range resp.GetShipments() {
				keys = append(keys, s.GetRecord().GetRecordKey())
			}
			if resp.GetNextPageToken() == "" {
				break
			}
			req.PageToken = resp.GetNextPageToken()
		}
		if !slices.Equal(keys, []string{"L-1", "L-2", "L-3"}) {
			t.Fatalf("paged keys %v", keys)
		}
		first, _ := client.ListShipments(ctx, &halovetv1.ListShipmentsRequest{PageSize: 1})
		_, err = client.ListShipments(ctx, &halovetv1.ListShipmentsRequest{PageSize: 1, CompanyId: shipOther, PageToken: first.GetNextPageToken()})
		wantStatus(t, "a token with other filters", err, codes.InvalidArgument, "page_token")
		_, err = client.ListShipments(ctx, &halovetv1.ListShipmentsRequest{Year: 2026, FromDate: "2026-01-01"})
		wantStatus(t, "year and a date range", err, codes.InvalidArgument, "year")
		_, err = client.ListShipments(ctx, &halovetv1.ListShipmentsRequest{AnnexGroup: "G/IX"})
		wantStatus(t, "unknown group", err, codes.InvalidArgument, "annex_group")
		_, err = client.ListShipments(ctx, &halovetv1.ListShipmentsRequest{FromDate: "15/06/2026"})
		wantStatus(t, "bad date", err, codes.InvalidArgument, "from_date")
	})

	t.Run("get: the verdict as recorded and the draws", func(t *testing.T) {
		got, err := client.GetShipment(ctx, &halovetv1.GetShipmentRequest{ShipmentId: vs[1].GetShipmentId()})
		if err != nil {
			t.Fatal(err)
		}
		s := got.GetShipment()
		if !proto.Equal(s.GetVerdict(), vs[1]) {
			t.Errorf("stored verdict %v; want the one answered %v", s.GetVerdict(), vs[1])
		}
		if len(s.GetDraws()) != 1 || s.GetDraws()[0].GetAmount() != "0.11" || s.GetDraws()[0].GetReleased() || len(got.GetVersions()) != 1 {
			t.Errorf("draws %v versions %d; want one draw of 0.11 ODP t, one version", s.GetDraws(), len(got.GetVersions()))
		}
		_, err = client.GetShipment(ctx, &halovetv1.GetShipmentRequest{ShipmentId: 987654})
		wantStatus(t, "unknown id", err, codes.NotFound, "")
		_, err = client.GetShipment(ctx, &halovetv1.GetShipmentRequest{})
		wantStatus(t, "no id", err, codes.InvalidArgument, "shipment_id")
	})

	t.Run("void", func(t *testing.T) {
		_, err := client.VoidShipment(ctx, &halovetv1.VoidShipmentRequest{ShipmentId: vs[0].GetShipmentId()})
		wantStatus(t, "void without a reason", err, codes.InvalidArgument, "reason")
		_, err = client.VoidShipment(ctx, &halovetv1.VoidShipmentRequest{ShipmentId: 987654, Reason: "x"})
		wantStatus(t, "void an unknown id", err, codes.NotFound, "")
		if d, _ := registerSums(t, st, shipLicence, 1); d != "0.115500000" {
			t.Fatalf("refused voids changed drawn to %s", d)
		}
		v, err := client.VoidShipment(ctx, &halovetv1.VoidShipmentRequest{ShipmentId: vs[0].GetShipmentId(), Reason: "declared twice by the broker"})
		if err != nil || v.GetShipment().GetState() != halovetv1.ShipmentState_SHIPMENT_STATE_VOIDED || !v.GetShipment().GetDraws()[0].GetReleased() {
			t.Fatalf("void: %v %v", v, err)
		}
		if d, l := registerSums(t, st, shipLicence, 1); d != "0.110000000" || l != d {
			t.Fatalf("after void: drawn %s, live draws %s; want 0.110000000 (0.0055 given back exactly)", d, l)
		}
		_, err = client.VoidShipment(ctx, &halovetv1.VoidShipmentRequest{ShipmentId: vs[0].GetShipmentId(), Reason: "again"})
		wantStatus(t, "void twice", err, codes.FailedPrecondition, "shipment_id")
		fix := proto.Clone(a).(*halovetv1.ShipmentRecord)
		fix.TotalNetQuantity = "50"
		_, err = client.CorrectShipment(ctx, &halovetv1.CorrectShipmentRequest{ShipmentId: vs[0].GetShipmentId(), Record: fix, Reason: "x"})
		wantStatus(t, "correct a voided record", err, codes.FailedPrecondition, "shipment_id")
		if d, _ := registerSums(t, st, shipLicence, 1); d != "0.110000000" {
			t.Fatalf("refused changes moved drawn to %s", d)
		}
	})

	t.Run("correct", func(t *testing.T) {
		fix := proto.Clone(b).(*halovetv1.ShipmentRecord)
		fix.TotalNetQuantity = "3" // 0.165 ODP t instead of 0.11
		_, err := client.CorrectShipment(ctx, &halovetv1.CorrectShipmentRequest{Record: fix})
		wantStatus(t, "correct without a reason", err, codes.InvalidArgument, "reason")
		broken := proto.Clone(fix).(*halovetv1.ShipmentRecord)
		broken.PartnerCountry = "QM" // not a Party: trade banned (Article 4)
		_, err = client.CorrectShipment(ctx, &halovetv1.CorrectShipmentRequest{Record: broken, Reason: "partner misread"})
		st0 := wantStatus(t, "a correction that breaks a rule", err, codes.InvalidArgument, "")
		if !strings.Contains(st0.Message(), "record.") {
			t.Fatalf("rule-breaking correction: %q; want the record's field named", st0.Message())
		}
		rekey := proto.Clone(fix).(*halovetv1.ShipmentRecord)
		rekey.RecordKey = "L-9"
		_, err = client.CorrectShipment(ctx, &halovetv1.CorrectShipmentRequest{ShipmentId: vs[1].GetShipmentId(), Record: rekey, Reason: "x"})
		wantStatus(t, "a correction under another key", err, codes.InvalidArgument, "record.record_key")
		tooMuch := proto.Clone(fix).(*halovetv1.ShipmentRecord)
		tooMuch.TotalNetQuantity = "20" // 1.1 ODP t > 1 allocated
		_, err = client.CorrectShipment(ctx, &halovetv1.CorrectShipmentRequest{Record: tooMuch, Reason: "x"})
		wantStatus(t, "an over-drawing correction", err, codes.FailedPrecondition, "record.total_net_quantity")
		if d, _ := registerSums(t, st, shipLicence, 1); d != "0.110000000" {
			t.Fatalf("refused corrections moved drawn to %s", d)
		}
		got, err := client.CorrectShipment(ctx, &halovetv1.CorrectShipmentRequest{Record: fix, Reason: "quantity misread: 3 t, not 2 t"})
		if err != nil {
			t.Fatal(err)
		}
		s := got.GetShipment()
		if s.GetVersion() != 2 || s.GetPreviousShipmentId() != vs[1].GetShipmentId() || s.GetState() != halovetv1.ShipmentState_SHIPMENT_STATE_LIVE ||
			got.GetVerdict().GetShipmentId() != s.GetShipmentId() {
			t.Fatalf("corrected: %v", got)
		}
		if d, l := registerSums(t, st, shipLicence, 1); d != "0.165000000" || l != d {
			t.Fatalf("after correction: drawn %s, live draws %s; want 0.165000000 (0.11 given back, 0.165 drawn)", d, l)
		}
		hist, err := client.GetShipment(ctx, &halovetv1.GetShipmentRequest{ShipmentId: s.GetShipmentId()})
		if err != nil || len(hist.GetVersions()) != 2 || hist.GetVersions()[0].GetState() != halovetv1.ShipmentState_SHIPMENT_STATE_SUPERSEDED ||
			hist.GetVersions()[0].GetChangeReason() != "quantity misread: 3 t, not 2 t" {
			t.Fatalf("history: %v %v", hist, err)
		}
		var n int
		if err := st.Pool().QueryRow(ctx, `SELECT count(*) FROM audit_log WHERE entity = 'shipment' AND action IN ('void', 'correct')`).Scan(&n); err != nil || n != 2 {
			t.Fatalf("%d audit entries for the void and the correction (err %v); want 2", n, err)
		}
		// Consumption counts the live version only: 0.165 ODP t of HCFC-22 imports.
		var odp string
		if err := st.Pool().QueryRow(ctx, `SELECT sum(odp_tonnes)::text FROM shipments WHERE state = 'live' AND resolved_designation = 'HCFC-22'`).Scan(&odp); err != nil || odp != "0.165000000" {
			t.Fatalf("live HCFC-22 ODP t %s (err %v); want 0.165000000", odp, err)
		}
	})
}

func TestRecordInClosedYear(t *testing.T) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	ctx := context.Background()
	vs, _ := shipRecordCall(t, client, shipRecord("Y-1"))
	_, err := client.CloseYear(ctx, &halovetv1.CloseYearRequest{Year: 2026})
	wantStatus(t, "close without a reason", err, codes.InvalidArgument, "reason")
	_, err = client.CloseYear(ctx, &halovetv1.CloseYearRequest{Year: 1900, Reason: "x"})
	wantStatus(t, "close 1900", err, codes.InvalidArgument, "year")
	closed, err := client.CloseYear(ctx, &halovetv1.CloseYearRequest{Year: 2026, Reason: "report submitted"})
	if err != nil || closed.GetClosedYear().GetYear() != 2026 {
		t.Fatalf("close: %v %v", closed, err)
	}
	_, err = client.CloseYear(ctx, &halovetv1.CloseYearRequest{Year: 2026, Reason: "again"})
	wantStatus(t, "close twice", err, codes.FailedPrecondition, "year")

	rec, _ := shipRecordCall(t, client, shipRecord("Y-2"))
	if rec[0].GetRecorded() || !slices.Contains(shipCodes(rec[0]), "YEAR_CLOSED") || rec[0].GetOutcome() != halovetv1.Outcome_OUTCOME_REJECTED {
		t.Fatalf("record in a closed year: %v; want rejected with YEAR_CLOSED", rec[0])
	}
	_, err = client.VoidShipment(ctx, &halovetv1.VoidShipmentRequest{ShipmentId: vs[0].GetShipmentId(), Reason: "x"})
	wantStatus(t, "void in a closed year", err, codes.FailedPrecondition, "declaration_date")
	fix := shipRecord("Y-1")
	fix.TotalNetQuantity = "200"
	_, err = client.CorrectShipment(ctx, &halovetv1.CorrectShipmentRequest{Record: fix, Reason: "x"})
	wantStatus(t, "correct in a closed year", err, codes.FailedPrecondition, "declaration_date")
	if d, _ := registerSums(t, st, shipLicence, 1); d != "0.005500000" {
		t.Fatalf("closed year: drawn %s; want 0.005500000 unchanged", d)
	}
	list, err := client.ListClosedYears(ctx, &halovetv1.ListClosedYearsRequest{})
	if err != nil || len(list.GetClosedYears()) != 1 || list.GetClosedYears()[0].GetReason() != "report submitted" {
		t.Fatalf("closed years: %v %v", list, err)
	}
	_, err = client.ReopenYear(ctx, &halovetv1.ReopenYearRequest{Year: 2026})
	wantStatus(t, "reopen without a reason", err, codes.InvalidArgument, "reason")
	if _, err := client.ReopenYear(ctx, &halovetv1.ReopenYearRequest{Year: 2026, Reason: "late customs correction"}); err != nil {
		t.Fatal(err)
	}
	_, err = client.ReopenYear(ctx, &halovetv1.ReopenYearRequest{Year: 2026, Reason: "again"})
	wantStatus(t, "reopen an open year", err, codes.FailedPrecondition, "year")
	if _, err := client.CorrectShipment(ctx, &halovetv1.CorrectShipmentRequest{Record: fix, Reason: "late customs correction"}); err != nil {
		t.Fatalf("correct after reopening: %v", err)
	}
}

// TestClosedYearLeavesOthersAlone: closing 2025 does not touch 2026 (YEAR_CLOSED silent).
func TestClosedYearLeavesOthersAlone(t *testing.T) {
	conn, _ := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	if _, err := client.CloseYear(context.Background(), &halovetv1.CloseYearRequest{Year: 2025, Reason: "report submitted"}); err != nil {
		t.Fatal(err)
	}
	vs, _ := shipRecordCall(t, client, shipRecord("O-1"))
	if !vs[0].GetRecorded() || slices.Contains(shipCodes(vs[0]), "YEAR_CLOSED") {
		t.Fatalf("2026 record with 2025 closed: %v", vs[0])
	}
}

// replayFile is an invented file of records against shipLicence's C/I line (1 ODP t):
// 10 t + 7 t of HCFC-22 = 0.55 + 0.385 = 0.935 ODP t (the second passes 90 %: a notice),
// an in-file duplicate of the first, a record the check rejects (non-Party partner), and
// 2 t (0.11 ODP t) more than is left.
func replayFile() []*halovetv1.ShipmentRecord {
	a, b, bad, over := shipRecord("F-1"), shipRecord("F-2"), shipRecord("F-3"), shipRecord("F-4")
	a.TotalNetQuantity, a.QuantityUnit, a.SourceLine = "10", "t", 2
	b.TotalNetQuantity, b.QuantityUnit, b.SourceLine = "7", "t", 3
	dup := proto.Clone(a).(*halovetv1.ShipmentRecord)
	dup.SourceLine = 4
	bad.PartnerCountry, bad.SourceLine = "QM", 5
	over.TotalNetQuantity, over.QuantityUnit, over.SourceLine = "2", "t", 6
	return []*halovetv1.ShipmentRecord{a, b, dup, bad, over}
}

func marshalVerdicts(t *testing.T, vs []*halovetv1.Verdict, clearReplayed bool) [][]byte {
	t.Helper()
	var out [][]byte
	for _, v := range vs {
		c := proto.Clone(v).(*halovetv1.Verdict)
		if clearReplayed {
			c.Replayed = false
		}
		b, err := proto.MarshalOptions{Deterministic: true}.Marshal(c)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, b)
	}
	return out
}

func TestReplayedFileGetsIdenticalVerdicts(t *testing.T) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)

	// Check mode first: the notices and figures recording must keep.
	chk := checkStreamVerdicts(t, client, replayFile())
	first, _ := shipRecordCall(t, client, replayFile()...)
	for i := range first {
		if got, want := shipCodes(first[i]), shipCodes(chk[i]); !slices.Equal(got, want) {
			t.Errorf("line %d: record mode codes %v, check mode %v; recording keeps every finding of the check", first[i].GetSourceLine(), got, want)
		}
	}
	if !slices.Contains(shipCodes(first[1]), "QUOTA_NEAR_LIMIT") || !first[1].GetRecorded() {
		t.Fatalf("F-2: %v; want recorded with QUOTA_NEAR_LIMIT", first[1])
	}
	if !slices.Contains(shipCodes(first[4]), "QUOTA_EXCEEDED") || !strings.Contains(findingMessage(first[4], "QUOTA_EXCEEDED"), "only 0.065 ODP t remain") {
		t.Fatalf("F-4: %v; want QUOTA_EXCEEDED stating the 0.065 ODP t left at its own draw", first[4])
	}
	drawn, _ := registerSums(t, st, shipLicence, 1)

	again, sum := shipRecordCall(t, client, replayFile()...)
	a, b := marshalVerdicts(t, first, true), marshalVerdicts(t, again, true) // all but the replayed flag
	for i := range a {
		if !bytes.Equal(a[i], b[i]) {
			t.Errorf("line %d: replayed verdict\n%v\ndiffers from the first\n%v", first[i].GetSourceLine(), again[i], first[i])
		}
	}
	if !again[0].GetReplayed() || !again[1].GetReplayed() || sum.GetRecorded() != 0 {
		t.Errorf("replay: replayed %t %t, %d recorded; want both stored records replayed, nothing recorded",
			again[0].GetReplayed(), again[1].GetReplayed(), sum.GetRecorded())
	}
	if d, _ := registerSums(t, st, shipLicence, 1); d != drawn || d != "0.935000000" {
		t.Fatalf("drawn %s after the replay, %s before; want 0.935000000 unchanged", d, drawn)
	}

	// A check of the recorded file: the recorded records say so, and their own draws cause
	// no quota finding.
	chk2 := checkStreamVerdicts(t, client, replayFile())
	for i, v := range chk2[:3] {
		if !v.GetReplayed() || v.GetShipmentId() == 0 || v.GetRecordedAt() == "" {
			t.Errorf("check of recorded line %d: %v; want it marked recorded, with id and time", v.GetSourceLine(), v)
		}
		if i < 2 && slices.Contains(shipCodes(v), "QUOTA_EXCEEDED") {
			t.Errorf("check of recorded line %d reports QUOTA_EXCEEDED: its own draws counted twice", v.GetSourceLine())
		}
	}
	// F-4 was not stored: 0.11 > the 0.065 the stored balance leaves.
	if !slices.Contains(shipCodes(chk2[4]), "QUOTA_EXCEEDED") || !strings.Contains(findingMessage(chk2[4], "QUOTA_EXCEEDED"), "only 0.065 ODP t remain") {
		t.Errorf("check of F-4: %v; want QUOTA_EXCEEDED against the stored balance 0.065", chk2[4])
	}
}

func findingMessage(v *halovetv1.Verdict, code string) string {
	for _, f := range v.GetFindings() {
		if f.GetCode() == code {
			return f.GetMessage()
		}
	}
	return ""
}

func checkStreamVerdicts(t *testing.T, client halovetv1.ShipmentServiceClient, recs []*halovetv1.ShipmentRecord) []*halovetv1.Verdict {
	t.Helper()
	stream, err := client.CheckShipments(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if err := stream.Send(&halovetv1.CheckShipmentsRequest{Records: recs}); err != nil {
		t.Fatal(err)
	}
	if err := stream.CloseSend(); err != nil {
		t.Fatal(err)
	}
	var out []*halovetv1.Verdict
	for {
		m, err := stream.Recv()
		if err != nil {
			t.Fatalf("CheckShipments: %v", err)
		}
		if m.GetSummary() != nil {
			return out
		}
		if v := m.GetVerdict(); v != nil {
			out = append(out, v)
		}
		out = append(out, m.GetVerdicts().GetVerdicts()...)
	}
}

// TestThreeServersRecordVoidCorrect: three servers on one database record, void and
// correct against the same licence line at once; afterwards the line's drawn amount is
// exactly the sum over the live records' draws, and never went below zero (the table's
// CHECK would have failed a write).
func TestThreeServersRecordVoidCorrect(t *testing.T) {
	conn1, st := startTestServer(t)
	shipRegistry(t, conn1)
	conn2, _ := startSecondServer(t, st)
	conn3, _ := startSecondServer(t, st)
	ctx := context.Background()
	conns := []*grpc.ClientConn{conn1, conn2, conn3}
	const perServer = 12
	var refused atomic.Int64
	var wg sync.WaitGroup
	errs := make(chan error, 3*perServer*3)
	for s, conn := range conns {
		wg.Add(1)
		go func(s int, client halovetv1.ShipmentServiceClient) {
			defer wg.Done()
			for i := 0; i < perServer; i++ {
				r := shipRecord(fmt.Sprintf("C-%d-%02d", s, i))
				r.TotalNetQuantity, r.QuantityUnit = "3", "t" // 0.165 ODP t each; 36 × 0.165 = 5.94, far over the 1 allocated
				vs, _ := shipRecordCall(t, client, r)
				if !vs[0].GetRecorded() {
					if !slices.Contains(shipCodes(vs[0]), "QUOTA_EXCEEDED") {
						errs <- fmt.Errorf("%s turned down without QUOTA_EXCEEDED: %v", r.GetRecordKey(), vs[0])
					}
					refused.Add(1)
					continue // turned down for quota: the line is full
				}
				id := vs[0].GetShipmentId()
				switch i % 3 {
				case 0:
					if _, err := client.VoidShipment(ctx, &halovetv1.VoidShipmentRequest{ShipmentId: id, Reason: "test void"}); err != nil {
						errs <- fmt.Errorf("void %d: %w", id, err)
					}
				case 1:
					fix := proto.Clone(r).(*halovetv1.ShipmentRecord)
					fix.TotalNetQuantity = "1"
					fix.QuantityUnit = "t" // 0.055 ODP t
					_, err := client.CorrectShipment(ctx, &halovetv1.CorrectShipmentRequest{ShipmentId: id, Record: fix, Reason: "test correction"})
					if err != nil {
						errs <- fmt.Errorf("correct %d: %w", id, err)
					}
				}
			}
		}(s, halovetv1.NewShipmentServiceClient(conn))
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Error(err)
	}
	drawn, live := registerSums(t, st, shipLicence, 1)
	if drawn != live {
		t.Fatalf("drawn %s, live draws sum to %s; want them equal", drawn, live)
	}
	var liveODP, released string
	var voided, superseded int
	if err := st.Pool().QueryRow(ctx, `SELECT coalesce(sum(odp_tonnes) FILTER (WHERE state = 'live'), 0)::numeric(30,9)::text,
	        count(*) FILTER (WHERE state = 'voided'), count(*) FILTER (WHERE state = 'superseded'),
	        (SELECT coalesce(sum(amount), 0)::numeric(30,9)::text FROM released_draws)
	    FROM shipments`).Scan(&liveODP, &voided, &superseded, &released); err != nil {
		t.Fatal(err)
	}
	if liveODP != drawn || voided == 0 || superseded == 0 || refused.Load() == 0 {
		t.Fatalf("live ODP t %s, drawn %s, %d voided, %d superseded, %d refused; want live = drawn and some of each",
			liveODP, drawn, voided, superseded, refused.Load())
	}
	var over bool
	if err := st.Pool().QueryRow(ctx, `SELECT drawn > allocated FROM quota_lines WHERE licence_number = $1 AND line_number = 1`, shipLicence).Scan(&over); err != nil || over {
		t.Fatalf("drawn above the allocation (err %v)", err)
	}
	if strings.HasPrefix(drawn, "-") {
		t.Fatalf("drawn %s below zero", drawn)
	}
	t.Logf("drawn %s ODP t, %d voided, %d superseded, %d refused, %s released", drawn, voided, superseded, refused.Load(), released)
}

// TestRegisterOverHTTP reaches the register on its HTTP paths: a listing with query
// filters, one shipment by id, a void on its :void path, and the closed years.
func TestRegisterOverHTTP(t *testing.T) {
	grpcClient, base, httpClient := startHTTPTestServer(t)
	vs, _ := shipRecordCall(t, grpcClient, shipRecord("H-1"), shipRecord("H-2"))
	get := func(path string, into proto.Message) int {
		t.Helper()
		resp, err := httpClient().Get(base + path)
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		raw, _ := io.ReadAll(resp.Body)
		if resp.StatusCode == http.StatusOK && into != nil {
			if err := protojson.Unmarshal(raw, into); err != nil {
				t.Fatalf("GET %s: %v\n%s", path, err, raw)
			}
		}
		return resp.StatusCode
	}
	var list halovetv1.ListShipmentsResponse
	if code := get("/v1/recorded-shipments?company_id="+shipCompany+"&year=2026&page_size=1", &list); code != http.StatusOK ||
		len(list.GetShipments()) != 1 || list.GetNextPageToken() == "" {
		t.Fatalf("GET /v1/recorded-shipments: %d %v", code, &list)
	}
	var one halovetv1.GetShipmentResponse
	if code := get(fmt.Sprintf("/v1/recorded-shipments/%d", vs[1].GetShipmentId()), &one); code != http.StatusOK ||
		one.GetShipment().GetRecord().GetRecordKey() != "H-2" {
		t.Fatalf("GET one: %d %v", code, &one)
	}
	if code := get("/v1/recorded-shipments/987654", nil); code != http.StatusNotFound {
		t.Fatalf("GET an unknown id: %d; want 404", code)
	}
	resp, err := httpClient().Post(fmt.Sprintf("%s/v1/recorded-shipments/%d:void", base, vs[0].GetShipmentId()), "application/json",
		strings.NewReader(`{"reason":"declared twice"}`))
	if err != nil {
		t.Fatal(err)
	}
	raw, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	var voided halovetv1.VoidShipmentResponse
	if resp.StatusCode != http.StatusOK || protojson.Unmarshal(raw, &voided) != nil ||
		voided.GetShipment().GetState() != halovetv1.ShipmentState_SHIPMENT_STATE_VOIDED {
		t.Fatalf("POST :void: %d %s", resp.StatusCode, raw)
	}
	var years halovetv1.ListClosedYearsResponse
	if code := get("/v1/reporting-years/closed", &years); code != http.StatusOK || len(years.GetClosedYears()) != 0 {
		t.Fatalf("GET closed years: %d %v", code, &years)
	}
}
