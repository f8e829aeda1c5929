package service_test

import (
	"context"
	"regexp"
	"strings"
	"testing"

	"google.golang.org/grpc"
	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// floatNoise is the mark binary floats leave in a decimal figure (issue 15): a run of
// zeros or nines before a last digit, as in 1.5670000000000002 or 0.027999999999999997.
var floatNoise = regexp.MustCompile(`\d\.\d*0000000\d|\d\.\d*9999999\d`)

// noiseIn returns the protojson form of an answer when it shows binary-float noise, else "".
func noiseIn(m proto.Message) string {
	b, err := protojson.Marshal(m)
	if err != nil {
		return "unmarshalable: " + err.Error()
	}
	if floatNoise.Match(b) {
		return string(b)
	}
	return ""
}

// scannedServices are the services whose every answer in the tests is scanned for
// binary-float noise by scanFigures.
var scannedServices = []string{"/halovet.v1.ConsumptionService/"}

// scanFigures is a client interceptor every test server's connection carries: each answer
// of a scanned service is written as protojson and must show no binary-float noise.
func scanFigures(tb testing.TB) grpc.UnaryClientInterceptor {
	return func(ctx context.Context, method string, req, reply any, cc *grpc.ClientConn, invoker grpc.UnaryInvoker, opts ...grpc.CallOption) error {
		err := invoker(ctx, method, req, reply, cc, opts...)
		if err != nil {
			return err
		}
		for _, s := range scannedServices {
			if !strings.HasPrefix(method, s) {
				continue
			}
			if m, ok := reply.(proto.Message); ok {
				if js := noiseIn(m); js != "" {
					tb.Errorf("%s answered with binary-float noise (%s): %s", method, floatNoise.FindString(js), js)
				}
			}
		}
		return nil
	}
}

// TestFigureNoiseScanFinds checks that the scan can fail: the answers of issue 15 are
// caught, exact decimals pass.
func TestFigureNoiseScanFinds(t *testing.T) {
	for _, noisy := range []string{"1.5670000000000002", "0.027999999999999997", "0.015900000000000025", "1162604.8000000002"} {
		m := &halovetv1.ComplianceYear{HeadroomAmount: noisy}
		if noiseIn(m) == "" {
			t.Errorf("%s: not found by the scan", noisy)
		}
	}
	for _, clean := range []string{"1.567", "0.028", "0", "100.0001", "2465.9375"} {
		m := &halovetv1.ComplianceYear{HeadroomAmount: clean}
		if js := noiseIn(m); js != "" {
			t.Errorf("%s: the scan finds noise in %s", clean, js)
		}
	}
}
