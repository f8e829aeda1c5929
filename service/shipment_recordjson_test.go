package service

import (
	"encoding/json"
	"reflect"
	"testing"

	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"
	"google.golang.org/protobuf/reflect/protoreflect"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// The register keeps a record as protojson gives it (jsonb: the value counts, not the
// text); storedRecordJSON writes the common record without protojson and must give the
// same JSON value, with every field of ShipmentRecord set (a field added to the message
// and not to the writer fails here), with the zero values left out as protojson leaves
// them, and with strings that need escaping. Records it hands to protojson (a
// composition, an enum value without a name) come back as protojson gives them.
func TestRecordJSONMatchesProtojson(t *testing.T) {
	tricky := []string{"XA-IMP-2026-801", "quote \" backslash \\ slash /", "tab\tnewline\nreturn\rbell\x07 nul\x00", "é ∑ 漢 😀 <>&", "\u2028\u2029"}
	var cases []*halovetv1.ShipmentRecord
	for i, s := range tricky {
		r := &halovetv1.ShipmentRecord{}
		m := r.ProtoReflect()
		fields := m.Descriptor().Fields()
		for j := 0; j < fields.Len(); j++ {
			f := fields.Get(j)
			if f.IsList() {
				continue
			}
			switch f.Kind() {
			case protoreflect.StringKind:
				m.Set(f, protoreflect.ValueOfString(s))
			case protoreflect.Int64Kind:
				m.Set(f, protoreflect.ValueOfInt64(int64(j*1000+i)-7))
			case protoreflect.EnumKind:
				vs := f.Enum().Values()
				m.Set(f, protoreflect.ValueOfEnum(vs.Get(1+i%(vs.Len()-1)).Number()))
			default:
				t.Fatalf("field %s is of kind %s, which storedRecordJSON does not write: add it", f.Name(), f.Kind())
			}
		}
		cases = append(cases, r)
	}
	// Zero values, a partly filled record, an unnamed enum value and a composition.
	cases = append(cases, &halovetv1.ShipmentRecord{},
		&halovetv1.ShipmentRecord{RecordKey: "K1", SourceLine: 2, Substance: "HCFC-22", TotalNetQuantity: "13.6", QuantityUnit: "kg"},
		&halovetv1.ShipmentRecord{RecordKey: "K2", Direction: halovetv1.Direction(99)},
		&halovetv1.ShipmentRecord{RecordKey: "K3", Substance: "R-404A", DeclaredComposition: []*halovetv1.MixtureShare{{Identifier: "HFC-125", MassPercent: "44"}}})
	for _, r := range cases {
		want, err := protojson.Marshal(r)
		if err != nil {
			t.Fatal(err)
		}
		got, err := storedRecordJSON(r)
		if err != nil {
			t.Fatalf("%v: %v", r, err)
		}
		var g, w any
		if err := json.Unmarshal(got, &g); err != nil {
			t.Fatalf("storedRecordJSON gave no JSON for %v: %v\n%s", r, err, got)
		}
		if err := json.Unmarshal(want, &w); err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(g, w) {
			t.Errorf("storedRecordJSON:\n%s\nprotojson:\n%s", got, want)
		}
		back := &halovetv1.ShipmentRecord{}
		if err := protojson.Unmarshal(got, back); err != nil || !proto.Equal(back, r) {
			t.Errorf("%s reads back as %v (%v); want %v", got, back, err, r)
		}
	}
	// Not UTF-8: refused as protojson refuses it.
	if _, err := storedRecordJSON(&halovetv1.ShipmentRecord{RecordKey: "K\xff"}); err == nil {
		t.Error("a record key that is not UTF-8 was written; want protojson's refusal")
	}
}
