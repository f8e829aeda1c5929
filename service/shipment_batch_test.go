package service_test

import (
	"context"
	"errors"
	"fmt"
	"io"
	"slices"
	"testing"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

// batchRecords is a sequence in which order, the stream's quota view and duplicate keys
// all matter: 10 t of HCFC-22 = 0.55 ODP t of the 1 ODP t C/I line (ODP 0.055, Montreal
// Protocol Annex C Group I), so the first fits and the second does not after it; the third
// (7.2727 t, 0.3999985 ODP t) takes the line to 95 %; then an unchanged repeat of the
// first key, a changed repeat, and an import from a non-Party.
func batchRecords() []*halovetv1.ShipmentRecord {
	first := shipRecord("B-1")
	first.TotalNetQuantity, first.QuantityUnit, first.SourceLine = "10", "t", 2
	second := proto.Clone(first).(*halovetv1.ShipmentRecord)
	second.RecordKey, second.SourceLine = "B-2", 3
	third := proto.Clone(first).(*halovetv1.ShipmentRecord)
	third.RecordKey, third.TotalNetQuantity, third.SourceLine = "B-3", "7.2727", 4
	replay := proto.Clone(first).(*halovetv1.ShipmentRecord)
	replay.SourceLine = 5
	conflict := proto.Clone(first).(*halovetv1.ShipmentRecord)
	conflict.TotalNetQuantity, conflict.SourceLine = "1", 6
	nonParty := shipRecord("B-6")
	nonParty.PartnerCountry, nonParty.SourceLine = "QM", 7
	return []*halovetv1.ShipmentRecord{first, second, third, replay, conflict, nonParty}
}

// checkStream sends recs in one CheckShipments message, asking for the per-component
// figures, and returns verdicts and summary.
func checkStream(t *testing.T, client halovetv1.ShipmentServiceClient, recs []*halovetv1.ShipmentRecord) ([]*halovetv1.Verdict, *halovetv1.BatchSummary) {
	t.Helper()
	return checkStreamAsking(t, client, true, recs)
}

// checkStreamAsking is checkStream, with components as the stream's component_figures.
func checkStreamAsking(t *testing.T, client halovetv1.ShipmentServiceClient, components bool, recs []*halovetv1.ShipmentRecord) ([]*halovetv1.Verdict, *halovetv1.BatchSummary) {
	t.Helper()
	stream, err := client.CheckShipments(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if err := stream.Send(&halovetv1.CheckShipmentsRequest{Records: recs, ComponentFigures: components}); err != nil {
		t.Fatal(err)
	}
	if err := stream.CloseSend(); err != nil {
		t.Fatal(err)
	}
	var vs []*halovetv1.Verdict
	for {
		m, err := stream.Recv()
		if errors.Is(err, io.EOF) {
			t.Fatal("stream ended without a summary")
		}
		if err != nil {
			t.Fatal(err)
		}
		if s := m.GetSummary(); s != nil {
			return vs, s
		}
		if v := m.GetVerdict(); v != nil {
			vs = append(vs, v)
		}
		vs = append(vs, m.GetVerdicts().GetVerdicts()...)
	}
}

func outcomesAndCodes(vs []*halovetv1.Verdict) [][]string {
	var out [][]string
	for _, v := range vs {
		out = append(out, append([]string{v.GetOutcome().String()}, shipCodes(v)...))
	}
	return out
}

// TestCheckShipmentBatchMatchesTheStream: the unary batch check answers the verdicts and
// summary a CheckShipments stream answers for the same records, and they are the verdicts
// the stream rules call for (order, quota drawn by earlier records, repeated keys).
func TestCheckShipmentBatchMatchesTheStream(t *testing.T) {
	t.Parallel()
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	recs := batchRecords()

	viaStream, streamSum := checkStream(t, client, recs)
	resp, err := client.CheckShipmentBatch(context.Background(), &halovetv1.CheckShipmentBatchRequest{Records: recs})
	if err != nil {
		t.Fatal(err)
	}
	if len(resp.GetVerdicts()) != len(recs) {
		t.Fatalf("%d verdicts for %d records", len(resp.GetVerdicts()), len(recs))
	}
	for i := range recs {
		// Each database stores its records at its own time: recorded_at is the one field
		// that must differ.
		a, b := proto.Clone(viaStream[i]).(*halovetv1.Verdict), proto.Clone(resp.GetVerdicts()[i]).(*halovetv1.Verdict)
		if (a.GetRecordedAt() == "") != (b.GetRecordedAt() == "") {
			t.Errorf("record %d: recorded_at %q in the stream, %q in the batch", i+1, a.GetRecordedAt(), b.GetRecordedAt())
		}
		a.RecordedAt, b.RecordedAt = "", ""
		if !proto.Equal(a, b) {
			t.Errorf("record %d: stream %v\n batch %v", i+1, viaStream[i], resp.GetVerdicts()[i])
		}
	}
	if !proto.Equal(streamSum, resp.GetSummary()) {
		t.Errorf("summaries differ: stream %v, batch %v", streamSum, resp.GetSummary())
	}
	want := [][]string{
		{"OUTCOME_ACCEPTED"},
		{"OUTCOME_REJECTED", "QUOTA_EXCEEDED"},
		{"OUTCOME_ACCEPTED", "QUOTA_NEAR_LIMIT"},
		{"OUTCOME_ACCEPTED", "DUP_REPLAY"},
		{"OUTCOME_REJECTED", "DUP_KEY_CONFLICT"},
		{"OUTCOME_REJECTED", "PARTNER_NON_PARTY", "QUOTA_NEAR_LIMIT"}, // the line is at 95 % by now
	}
	if got := outcomesAndCodes(resp.GetVerdicts()); !slices.EqualFunc(got, want, slices.Equal) {
		t.Errorf("batch verdicts %v; want %v", got, want)
	}
	var n int
	if err := st.Pool().QueryRow(context.Background(), `SELECT count(*) FROM shipments`).Scan(&n); err != nil || n != 0 {
		t.Errorf("a batch check stored %d shipments (err %v); want none", n, err)
	}
}

// TestRecordShipmentBatchMatchesTheStream records the same records through a
// RecordShipments stream on one database and through RecordShipmentBatch on another: the
// verdicts, the summaries and what each database holds agree; a second batch call with the
// same records is answered as replays and draws nothing twice.
func TestRecordShipmentBatchMatchesTheStream(t *testing.T) {
	t.Parallel()
	connS, stS := startTestServer(t)
	connB, stB := startTestServer(t)
	shipRegistry(t, connS)
	shipRegistry(t, connB)
	recs := batchRecords()
	// Two more that pass the check on the balance the call began with, of which only the
	// first fits when written (0.0275 ODP t each; B-1 and B-3 leave 0.0500015 of the line).
	late1, late2 := shipRecord("B-7"), shipRecord("B-8")
	late1.TotalNetQuantity, late1.QuantityUnit = "0.5", "t" // 0.0275 ODP t
	late2.TotalNetQuantity, late2.QuantityUnit = "0.5", "t"
	recs = append(recs, late1, late2)

	viaStream, streamSum := shipRecordCall(t, halovetv1.NewShipmentServiceClient(connS), recs...)
	client := halovetv1.NewShipmentServiceClient(connB)
	resp, err := client.RecordShipmentBatch(context.Background(), &halovetv1.RecordShipmentBatchRequest{Records: recs})
	if err != nil {
		t.Fatal(err)
	}
	if len(resp.GetVerdicts()) != len(recs) {
		t.Fatalf("%d verdicts for %d records", len(resp.GetVerdicts()), len(recs))
	}
	for i := range recs {
		// Each database stores its records at its own time: recorded_at is the one field
		// that must differ.
		a, b := proto.Clone(viaStream[i]).(*halovetv1.Verdict), proto.Clone(resp.GetVerdicts()[i]).(*halovetv1.Verdict)
		if (a.GetRecordedAt() == "") != (b.GetRecordedAt() == "") {
			t.Errorf("record %d: recorded_at %q in the stream, %q in the batch", i+1, a.GetRecordedAt(), b.GetRecordedAt())
		}
		a.RecordedAt, b.RecordedAt = "", ""
		if !proto.Equal(a, b) {
			t.Errorf("record %d: stream %v\n batch %v", i+1, viaStream[i], resp.GetVerdicts()[i])
		}
	}
	if !proto.Equal(streamSum, resp.GetSummary()) {
		t.Errorf("summaries differ: stream %v, batch %v", streamSum, resp.GetSummary())
	}
	var recorded []bool
	for _, v := range resp.GetVerdicts() {
		recorded = append(recorded, v.GetRecorded())
	}
	// B-1, B-3 stored; B-2 over quota; the repeat of B-1 is a replay of a stored record;
	// the conflict and the non-Party import rejected; B-7 fits (0.9774985 ODP t), B-8 not.
	if want := []bool{true, false, true, true, false, false, true, false}; !slices.Equal(recorded, want) {
		t.Errorf("recorded %v; want %v", recorded, want)
	}
	for _, st := range []*store.Store{stS, stB} {
		if d, s := shipLineDrawn(t, st, shipLicence, 1); d != "0.977498500" || s != d {
			t.Errorf("C/I line drawn %s, draws sum %s; want 0.977498500 both (0.55 + 0.3999985 + 0.0275)", d, s)
		}
	}

	again, err := client.RecordShipmentBatch(context.Background(), &halovetv1.RecordShipmentBatchRequest{Records: recs[:1]})
	if err != nil {
		t.Fatal(err)
	}
	if v := again.GetVerdicts()[0]; !v.GetReplayed() || !v.GetRecorded() || again.GetSummary().GetReplayed() != 1 {
		t.Errorf("repeat call: %v, summary %v; want a recorded replay", v, again.GetSummary())
	}
	if d, _ := shipLineDrawn(t, stB, shipLicence, 1); d != "0.977498500" {
		t.Errorf("C/I line drawn %s after a replayed call; want still 0.977498500", d)
	}
}

// TestBatchCallLimits: an empty batch and one over the documented maximum are refused
// INVALID_ARGUMENT naming the field records and the maximum; nothing is stored.
func TestBatchCallLimits(t *testing.T) {
	t.Parallel()
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	over := make([]*halovetv1.ShipmentRecord, service.MaxRecordsPerBatchCall+1)
	for i := range over {
		over[i] = shipRecord(fmt.Sprintf("O-%d", i))
		over[i].TotalNetQuantity = "1"
	}
	for name, call := range map[string]func([]*halovetv1.ShipmentRecord) error{
		"check": func(r []*halovetv1.ShipmentRecord) error {
			_, err := client.CheckShipmentBatch(context.Background(), &halovetv1.CheckShipmentBatchRequest{Records: r})
			return err
		},
		"record": func(r []*halovetv1.ShipmentRecord) error {
			_, err := client.RecordShipmentBatch(context.Background(), &halovetv1.RecordShipmentBatchRequest{Records: r})
			return err
		},
	} {
		for _, recs := range [][]*halovetv1.ShipmentRecord{nil, over} {
			err := call(recs)
			st := status.Convert(err)
			var field string
			for _, d := range st.Details() {
				if br, ok := d.(*errdetails.BadRequest); ok && len(br.GetFieldViolations()) > 0 {
					field = br.GetFieldViolations()[0].GetField()
				}
			}
			if st.Code() != codes.InvalidArgument || field != "records" {
				t.Errorf("%s with %d records: %v (field %q); want INVALID_ARGUMENT on records", name, len(recs), err, field)
			}
		}
		if err := call(over[:service.MaxRecordsPerBatchCall]); err != nil {
			t.Errorf("%s with the maximum of %d records: %v", name, service.MaxRecordsPerBatchCall, err)
		}
	}
	var n int
	if err := st.Pool().QueryRow(context.Background(), `SELECT count(*) FROM shipments`).Scan(&n); err != nil || n != service.MaxRecordsPerBatchCall {
		t.Errorf("stored %d shipments (err %v); want the %d of the one call within the maximum", n, err, service.MaxRecordsPerBatchCall)
	}
}

// TestCheckStreamComponentFiguresWhenAsked: a check stream's verdicts carry the
// per-component figures only when its first message asks for them
// (component_figures); apart from them, the verdicts and the summary are the same. The
// records are batchRecords' (HCFC-22, one component) and an R-404A import: 100 kg, 44/52/4
// HFC-125/HFC-143a/HFC-134a by ASHRAE 34, three components.
func TestCheckStreamComponentFiguresWhenAsked(t *testing.T) {
	t.Parallel()
	conn, _ := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	blend := shipRecord("B-7")
	blend.Substance, blend.SourceLine = "R-404A", 8
	recs := append(batchRecords(), blend)

	asked, askedSum := checkStreamAsking(t, client, true, recs)
	plain, plainSum := checkStreamAsking(t, client, false, recs)
	if len(asked) != len(recs) || len(plain) != len(recs) {
		t.Fatalf("%d and %d verdicts for %d records", len(asked), len(plain), len(recs))
	}
	for i := range recs {
		if n := len(plain[i].GetFigures().GetComponents()); n != 0 {
			t.Errorf("record %d, not asked: %d components; want none", i+1, n)
		}
		want := 1
		if i == len(recs)-1 {
			want = 3
		}
		if n := len(asked[i].GetFigures().GetComponents()); n != want {
			t.Errorf("record %d, asked: %d components; want %d", i+1, n, want)
		}
		stripped := proto.Clone(asked[i]).(*halovetv1.Verdict)
		if stripped.Figures != nil {
			stripped.Figures.Components = nil
		}
		if !proto.Equal(stripped, plain[i]) {
			t.Errorf("record %d: apart from the components, asked %v\n not asked %v", i+1, asked[i], plain[i])
		}
	}
	if !proto.Equal(askedSum, plainSum) {
		t.Errorf("summaries differ: asked %v, not asked %v", askedSum, plainSum)
	}
}
