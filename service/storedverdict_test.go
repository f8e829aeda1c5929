package service

import (
	"math"
	"testing"

	"google.golang.org/protobuf/encoding/protowire"

	"github.com/halovet/halovet/store"
)

// TestStoredVerdictOfTheDoubleEncoding: a verdict stored while the figures were doubles
// (ShipmentFigures fields 3, 4, 5, now reserved) still decodes; its totals are read from the
// register's columns. Figures: 0.3 kg of HCFC-22 × ODP 0.055 / 1000 = 0.0000165 ODP t (ODP
// from Montreal Protocol Annex C Group I); the old double was 1.6499999999999998e-05.
func TestStoredVerdictOfTheDoubleEncoding(t *testing.T) {
	var fig []byte
	fig = protowire.AppendTag(fig, 1, protowire.BytesType)
	fig = protowire.AppendString(fig, "HCFC-22")
	for n, v := range map[protowire.Number]float64{3: 0.3, 4: 1.6499999999999998e-05, 5: 0} {
		fig = protowire.AppendTag(fig, n, protowire.Fixed64Type)
		fig = protowire.AppendFixed64(fig, math.Float64bits(v))
	}
	var old []byte
	old = protowire.AppendTag(old, 1, protowire.BytesType)
	old = protowire.AppendString(old, "K-OLD")
	old = protowire.AppendTag(old, 5, protowire.BytesType)
	old = protowire.AppendBytes(old, fig)

	v, err := storedVerdict(old)
	if err != nil {
		t.Fatalf("the old encoding does not decode: %v", err)
	}
	if v.GetRecordKey() != "K-OLD" || v.GetFigures().GetResolvedDesignation() != "HCFC-22" || v.GetFigures().GetNetMassKg() != "" {
		t.Errorf("decoded %v; want K-OLD, HCFC-22 and no decimal net mass", v)
	}
	x := store.StoredShipment{ID: 7, State: store.StateLive, Version: 1, RecordJSON: []byte(`{"recordKey":"K-OLD"}`), Verdict: old,
		NetMassKg: 300000000, ODPTonnes: 16500}
	r, err := recordedToProto(&x)
	if err != nil {
		t.Fatal(err)
	}
	f := r.GetVerdict().GetFigures()
	if f.GetNetMassKg() != "0.3" || f.GetOdpTonnes() != "0.0000165" || f.GetCo2ETonnes() != "0" || r.GetOdpTonnes() != "0.0000165" {
		t.Errorf("old verdict's figures %v, shipment %s ODP t; want 0.3 kg, 0.0000165 ODP t, 0 CO2-eq t from the register", f, r.GetOdpTonnes())
	}
}
