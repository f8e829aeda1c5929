package validate

import (
	"bytes"
	"reflect"
	"testing"

	"github.com/halovet/halovet/terms"
)

// TestRecordWriterRoundTrip: what RecordWriter writes, NewReader of the same format reads
// back into the same records (the source line apart). The records are invented.
func TestRecordWriterRoundTrip(t *testing.T) {
	recs := []Record{
		{Key: "RT-1", Direction: terms.DirectionImport, CompanyID: "XA-1", LicenceNumber: "XA-IMP-1", PartnerCountry: "XB",
			DeclarationDate: "2026-03-01", Substance: "HCFC-22", HSCode: "2903.71", CAS: "75-45-6", Formula: "CHClF2",
			TotalQuantity: "1250.5", Unit: "kg", PackageCount: 10, FillPerPackage: "125.05", Purpose: terms.PurposeServicing,
			Condition: terms.ConditionVirgin},
		{Key: "RT-2, with a comma", Direction: terms.DirectionReExport, CompanyID: "XA-1", PartnerCountry: "XC",
			DeclarationDate: "2026-04-02", Substance: "mixture \"quoted\"", TotalQuantity: "3", Unit: "t",
			Composition: []DeclaredShare{{Identifier: "HFC-32", MassPct: 50}, {Identifier: "HFC-125", MassPct: 50}},
			Measured:    []MeasuredShare{{Identifier: "HFC-32", MassPct: 49.5, Uncertainty: 0.5}, {Identifier: "air", MassPct: 50.5}}},
	}
	for _, f := range []Format{FormatCSV, FormatJSONL} {
		var buf bytes.Buffer
		w, err := NewRecordWriter(f, &buf)
		if err != nil {
			t.Fatal(err)
		}
		for i := range recs {
			if err := w.Write(&recs[i]); err != nil {
				t.Fatal(err)
			}
		}
		if err := w.Flush(); err != nil {
			t.Fatal(err)
		}
		rd, err := NewReader(f, bytes.NewReader(buf.Bytes()))
		if err != nil {
			t.Fatalf("%v: %v\n%s", f, err, buf.String())
		}
		for i := range recs {
			got, le, err := rd.Next()
			if err != nil || le != nil {
				t.Fatalf("%v record %d: %v %v\n%s", f, i, le, err, buf.String())
			}
			got.Line = 0
			if !reflect.DeepEqual(got, recs[i]) {
				t.Errorf("%v record %d read back as\n%+v\nwant\n%+v", f, i, got, recs[i])
			}
		}
	}
}
