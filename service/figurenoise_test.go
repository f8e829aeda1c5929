package service_test

import (
	"testing"

	"google.golang.org/protobuf/encoding/protojson"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// TestFigureNoiseScanFinds checks that the scan of the ConsumptionService answers
// (scanAnswer, noisescan_test.go) can fail: the figures of issue 15 and a product of a
// rounded mean are caught, exact decimals pass.
func TestFigureNoiseScanFinds(t *testing.T) {
	if !scannedService("/halovet.v1.ConsumptionService/AssessCompliance") {
		t.Fatal("ConsumptionService answers are not scanned")
	}
	for _, noisy := range []string{"1.5670000000000002", "0.027999999999999997", "0.015900000000000025", "1162604.8000000002"} {
		b, _ := protojson.Marshal(&halovetv1.ComplianceYear{HeadroomAmount: noisy})
		if !floatNoise.Match(b) {
			t.Errorf("%s: not found by the scan", noisy)
		}
	}
	for _, clean := range []string{"1.567", "0.028", "0", "100.0001", "2465.9375"} {
		b, _ := protojson.Marshal(&halovetv1.ComplianceYear{HeadroomAmount: clean})
		if floatNoise.Match(b) {
			t.Errorf("%s: the scan finds noise in %s", clean, b)
		}
	}
}
