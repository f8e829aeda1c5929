package service_test

import (
	"context"
	"regexp"
	"strings"
	"sync/atomic"
	"testing"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// floatNoise is what binary-float arithmetic leaves in a decimal figure: a run of seven
// zeros or nines before a last digit (0.0007480000000000001, 0.027999999999999997).
var floatNoise = regexp.MustCompile(`\d\.\d*0000000\d|\d\.\d*9999999\d`)

// scannedAnswers counts the LicensingService, ShipmentService and ConsumptionService
// answers the test clients scanned.
var scannedAnswers atomic.Int64

// scannedService reports whether a method's answers are scanned for float noise.
func scannedService(method string) bool {
	return strings.HasPrefix(method, "/halovet.v1.LicensingService/") || strings.HasPrefix(method, "/halovet.v1.ShipmentService/") ||
		strings.HasPrefix(method, "/halovet.v1.ConsumptionService/")
}

// scanAnswer fails tb when the protojson form of an answer shows binary-float noise.
func scanAnswer(tb testing.TB, method string, m any) {
	pm, ok := m.(proto.Message)
	if !ok || !scannedService(method) {
		return
	}
	b, err := protojson.Marshal(pm)
	if err != nil {
		tb.Errorf("%s: answer does not marshal: %v", method, err)
		return
	}
	scannedAnswers.Add(1)
	if loc := floatNoise.FindIndex(b); loc != nil {
		from, to := max(0, loc[0]-60), min(len(b), loc[1]+20)
		tb.Errorf("%s answered a figure with binary-float noise: …%s…", method, b[from:to])
	}
}

// noiseScan is the dial options of the test clients: every answer of the licensing and
// shipment services, unary or streamed, is scanned by scanAnswer. Benchmarks dial without
// it: they measure the client as `halovet check` runs it, and the scan (protojson and a
// regular expression over every answer) cost more than half of the streamed check's CPU.
func noiseScan(tb testing.TB) []grpc.DialOption {
	if _, bench := tb.(*testing.B); bench {
		return nil
	}
	unary := func(ctx context.Context, method string, req, reply any, cc *grpc.ClientConn, invoker grpc.UnaryInvoker, opts ...grpc.CallOption) error {
		err := invoker(ctx, method, req, reply, cc, opts...)
		if err == nil {
			scanAnswer(tb, method, reply)
		}
		return err
	}
	stream := func(ctx context.Context, desc *grpc.StreamDesc, cc *grpc.ClientConn, method string, streamer grpc.Streamer, opts ...grpc.CallOption) (grpc.ClientStream, error) {
		s, err := streamer(ctx, desc, cc, method, opts...)
		if err != nil {
			return nil, err
		}
		return &scannedStream{ClientStream: s, tb: tb, method: method}, nil
	}
	return []grpc.DialOption{grpc.WithChainUnaryInterceptor(unary), grpc.WithChainStreamInterceptor(stream)}
}

type scannedStream struct {
	grpc.ClientStream
	tb     testing.TB
	method string
}

func (s *scannedStream) RecvMsg(m any) error {
	err := s.ClientStream.RecvMsg(m)
	if err == nil {
		scanAnswer(s.tb, s.method, m)
	}
	return err
}

// TestNoiseScanFindsNoise: the scan's pattern catches the noise it is for and passes the
// exact figures (a scan that cannot fail would prove nothing).
func TestNoiseScanFindsNoise(t *testing.T) {
	for _, s := range []string{`"odpTonnes":"0.0007480000000000001"`, `"headroom":1.5670000000000002`, `"x":"0.027999999999999997"`} {
		if !floatNoise.MatchString(s) {
			t.Errorf("%s is not caught", s)
		}
	}
	for _, s := range []string{`"odpTonnes":"0.000748"`, `"netMassKg":"45.359237"`, `"drawnAmount":"0"`, `"amount":"0.0000165"`, `"co2eTonnes":"235.8875"`} {
		if floatNoise.MatchString(s) {
			t.Errorf("%s is caught; it is exact", s)
		}
	}
}

// TestExactFiguresOnTheWire: the licensing and shipment answers carry exact decimals where
// the float64 arithmetic of the checker is noisy, zero figures present as "0", and the
// quota ledger's billionths as they are counted.
func TestExactFiguresOnTheWire(t *testing.T) {
	conn, _ := startTestServer(t)
	shipRegistry(t, conn)
	ctx := context.Background()
	lic := halovetv1.NewLicensingServiceClient(conn)
	ship := halovetv1.NewShipmentServiceClient(conn)
	before := scannedAnswers.Load()

	// An unused line: drawn_amount is present as "0", remaining_amount is the allocation.
	got, err := lic.GetLicence(ctx, &halovetv1.GetLicenceRequest{LicenceNumber: shipLicence})
	if err != nil {
		t.Fatal(err)
	}
	js, _ := protojson.Marshal(got.GetLicence().GetQuotaLines()[0])
	if !strings.Contains(string(js), `"drawnAmount":"0"`) || !strings.Contains(string(js), `"remainingAmount":"1"`) || !strings.Contains(string(js), `"allocatedAmount":"1"`) {
		t.Errorf("unused line 1 as JSON: %s; want allocatedAmount, drawnAmount and remainingAmount 1, 0, 1", js)
	}

	hcfc := func(key, qty string) *halovetv1.ShipmentRecord {
		r := shipRecord(key)
		r.TotalNetQuantity = qty
		return r
	}
	r410a := shipRecord("EX-R410A")
	r410a.Substance, r410a.TotalNetQuantity = "R-410A", "0.1"
	vs, _ := shipRecordCall(t, ship, hcfc("EX-13.6", "13.6"), hcfc("EX-0.3", "0.3"), r410a)
	want := []struct{ kg, odpT, co2e, draw string }{
		// 13.6 kg × ODP 0.055 / 1000 = 0.000748 ODP t (ODP of HCFC-22: Montreal Protocol Annex C Group I).
		{"13.6", "0.000748", "0", "0.000748"},
		// 0.3 kg × 0.055 / 1000 = 0.0000165 ODP t (the checker's float64 gives 1.6499999999999998e-05).
		{"0.3", "0.0000165", "0", "0.0000165"},
		// 0.1 kg R-410A (HFC-32/HFC-125 50/50, ASHRAE 34): 0.00005 t × 675 + 0.00005 t × 3500 =
		// 0.20875 CO2-eq t (Annex F GWPs; the float64 sum is 0.20875000000000002); no ODP.
		{"0.1", "0", "0.20875", "0.20875"},
	}
	for i, w := range want {
		f := vs[i].GetFigures()
		if f.GetNetMassKg() != w.kg || f.GetOdpTonnes() != w.odpT || f.GetCo2ETonnes() != w.co2e {
			t.Errorf("%s: %s kg, %s ODP t, %s CO2-eq t; want %s, %s, %s", vs[i].GetRecordKey(), f.GetNetMassKg(), f.GetOdpTonnes(), f.GetCo2ETonnes(), w.kg, w.odpT, w.co2e)
		}
		if d := vs[i].GetDraws(); len(d) != 1 || d[0].GetAmount() != w.draw {
			t.Errorf("%s: draws %v; want one of %s", vs[i].GetRecordKey(), d, w.draw)
		}
	}
	// Component figures are exact too: the R-410A components weigh 0.05 kg each.
	if cs := vs[2].GetFigures().GetComponents(); len(cs) != 2 || cs[0].GetMassKg() != "0.05" || cs[1].GetCo2ETonnes() != "0.175" || cs[0].GetOdpTonnes() != "0" {
		t.Errorf("R-410A components %v; want 0.05 kg each, HFC-125 0.00005 t × 3500 = 0.175 CO2-eq t, ODP t 0", cs)
	}

	// The quota ledger's billionths: 0.000748 + 0.0000165 drawn of 1 ODP t.
	got, err = lic.GetLicence(ctx, &halovetv1.GetLicenceRequest{LicenceNumber: shipLicence})
	if err != nil {
		t.Fatal(err)
	}
	q := got.GetLicence().GetQuotaLines()
	if q[0].GetDrawnAmount() != "0.0007645" || q[0].GetRemainingAmount() != "0.9992355" || q[1].GetDrawnAmount() != "0.20875" || q[1].GetRemainingAmount() != "9999.79125" {
		t.Errorf("lines after drawing: %v; want line 1 drawn 0.0007645 of 1, line 2 drawn 0.20875 of 10000", q)
	}

	// The register's figures.
	list, err := ship.ListShipments(ctx, &halovetv1.ListShipmentsRequest{RecordKey: "EX-0.3"})
	if err != nil || len(list.GetShipments()) != 1 {
		t.Fatalf("ListShipments: %v %v", list, err)
	}
	s := list.GetShipments()[0]
	if s.GetNetMassKg() != "0.3" || s.GetOdpTonnes() != "0.0000165" || s.GetCo2ETonnes() != "0" || s.GetDraws()[0].GetAmount() != "0.0000165" {
		t.Errorf("recorded EX-0.3: %s kg, %s ODP t, %s CO2-eq t, draws %v; want 0.3, 0.0000165, 0, 0.0000165", s.GetNetMassKg(), s.GetOdpTonnes(), s.GetCo2ETonnes(), s.GetDraws())
	}
	if !proto.Equal(s.GetVerdict().GetFigures(), vs[1].GetFigures()) {
		t.Errorf("stored verdict figures %v; want those answered %v", s.GetVerdict().GetFigures(), vs[1].GetFigures())
	}
	if scannedAnswers.Load() == before {
		t.Error("no answer was scanned for float noise; the test client's interceptors are not in place")
	}
}

// TestQuotaAmountRequests: a request's quota amount that is not a plain decimal, is
// negative, or has more decimals than the register counts is refused naming the field.
func TestQuotaAmountRequests(t *testing.T) {
	conn, _ := startTestServer(t)
	shipRegistry(t, conn)
	lic := halovetv1.NewLicensingServiceClient(conn)
	for _, c := range []struct{ amount, why string }{
		{"1e3", "is not a decimal"}, {"12,5", "is not a decimal"}, {"-1", "is negative"},
		{"0.0000000001", "more than 9 decimals"}, {"1000000001", "above the largest quota amount"},
	} {
		l := &halovetv1.Licence{LicenceNumber: "XA-IMP-2026-399", CompanyId: shipCompany, Directions: []halovetv1.Direction{halovetv1.Direction_DIRECTION_IMPORT},
			ValidFrom: "2026-01-01", ValidTo: "2026-12-31", Status: halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE,
			QuotaLines: []*halovetv1.QuotaLine{{AnnexGroup: "C/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES, AllocatedAmount: c.amount}}}
		_, err := lic.IssueLicence(context.Background(), &halovetv1.IssueLicenceRequest{Licence: l, Reason: "test"})
		if status.Code(err) != codes.InvalidArgument || !strings.Contains(err.Error(), "licence.quota_lines[0].allocated_amount") || !strings.Contains(err.Error(), c.why) {
			t.Errorf("allocated_amount %q: %v; want INVALID_ARGUMENT naming licence.quota_lines[0].allocated_amount, %q", c.amount, err, c.why)
		}
	}
}
