package service_test

import (
	"context"
	"strings"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/encoding/protowire"
	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// fuzzMethods are the unary calls whose whole request message is fuzzed: the ones that take
// free-form input from outside (records, compositions, readings, identifiers).
var fuzzMethods = []string{
	"/halovet.v1.ShipmentService/CheckShipment",
	"/halovet.v1.ShipmentService/CheckShipmentBatch",
	"/halovet.v1.CatalogueService/EvaluateMixture",
	"/halovet.v1.CatalogueService/ResolveIdentifier",
	"/halovet.v1.AnalysisService/AnalyseReading",
	"/halovet.v1.LicensingService/IssueLicence",
}

// nested returns a message of depth levels of a length-delimited field 1 inside itself: deep
// nesting the decoder must bound.
func nested(depth int) []byte {
	b := protowire.AppendTag(nil, 2, protowire.VarintType)
	b = protowire.AppendVarint(b, 1)
	for range depth {
		b = protowire.AppendBytes(protowire.AppendTag(nil, 1, protowire.BytesType), b)
	}
	return b
}

// FuzzAPIMessages sends arbitrary bytes as the request of each fuzzMethods call to a real
// server on a real database. Whatever arrives, the answer is OK or a refusal of the input
// (InvalidArgument, ResourceExhausted, NotFound, FailedPrecondition, AlreadyExists), never
// Internal, Unknown or a dropped connection, and the server still answers its health check.
// The seeds are valid messages, a record with a 10,000-component composition, a batch of
// 2,000 records, and nesting 200 deep.
func FuzzAPIMessages(f *testing.F) {
	seed := func(method int, m proto.Message) {
		b, err := proto.Marshal(m)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(uint8(method), b)
	}
	rec := shipRecord("FZ-1")
	seed(0, &halovetv1.CheckShipmentRequest{Record: rec})
	big := shipRecord("FZ-2")
	for i := range 10000 {
		big.DeclaredComposition = append(big.DeclaredComposition, &halovetv1.MixtureShare{Identifier: "HFC-" + strings.Repeat("3", i%5+1), MassPercent: "0.01"})
	}
	seed(0, &halovetv1.CheckShipmentRequest{Record: big})
	var many []*halovetv1.ShipmentRecord
	for range 2000 {
		many = append(many, rec)
	}
	seed(1, &halovetv1.CheckShipmentBatchRequest{Records: many})
	seed(2, &halovetv1.EvaluateMixtureRequest{Blend: "R-404A", NetMassKg: "10"})
	seed(3, &halovetv1.ResolveIdentifierRequest{Identifier: "75-45-6"})
	seed(4, &halovetv1.AnalyseReadingRequest{Components: []*halovetv1.MeasuredShare{{Identifier: "HCFC-22", MassPercent: "95"}}, NonCondensablePercent: "5"})
	seed(5, &halovetv1.IssueLicenceRequest{Licence: &halovetv1.Licence{LicenceNumber: "XA-FZ-1", CompanyId: shipCompany}, Reason: "fuzz"})
	for i := range fuzzMethods {
		f.Add(uint8(i), nested(200))
		f.Add(uint8(i), []byte{0x0a, 0xff, 0xff, 0xff, 0xff, 0x0f}) // a length far past the end
	}

	conn, _, _ := startServerWith(f, service.Options{OpenAccess: true})
	shipRegistry(f, conn)
	health := healthpb.NewHealthClient(conn)
	f.Fuzz(func(t *testing.T, which uint8, msg []byte) {
		method := fuzzMethods[int(which)%len(fuzzMethods)]
		ctx, cancel := context.WithTimeout(context.Background(), 20*time.Second)
		defer cancel()
		var out []byte
		err := conn.Invoke(ctx, method, &msg, &out, grpc.ForceCodecV2(rawCodec{}))
		switch status.Code(err) {
		case codes.OK, codes.InvalidArgument, codes.ResourceExhausted, codes.NotFound, codes.FailedPrecondition, codes.AlreadyExists:
		default:
			t.Fatalf("%s with %d bytes: %v", method, len(msg), err)
		}
		if _, err := health.Check(ctx, &healthpb.HealthCheckRequest{}); err != nil {
			t.Fatalf("health after %s: %v", method, err)
		}
	})
}
