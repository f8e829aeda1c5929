package validate

import (
	"bytes"
	"fmt"
	"io"
	"testing"
)

// typicalRecords is a mix of everyday declarations (INVENTED companies and licences):
// cylinders of an HCFC, an HFC blend with its HS code, a single HFC with CAS and HS, and a
// blend with a declared composition.
func typicalRecords() []Record {
	a := baseRecord()
	b := baseRecord()
	r404A(&b)
	b.TotalQuantity, b.PackageCount = "10.9", 20
	c := baseRecord()
	hfc134a(&c)
	c.TotalQuantity, c.PackageCount = "13.6", 12
	d := baseRecord()
	r404A(&d)
	d.Composition = []DeclaredShare{{"HFC-125", 44}, {"HFC-143a", 52}, {"HFC-134a", 4}}
	d.TotalQuantity, d.Unit, d.PackageCount = "2.5", "t", 0
	return []Record{a, b, c, d}
}

func BenchmarkCheck(b *testing.B) {
	env := testEnv(b)
	recs := typicalRecords()
	ledger := NewMemoryLedger()
	// Warm the environment's indexes once.
	_ = Check(env, &recs[0], ledger)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		r := &recs[i%len(recs)]
		v := Check(env, r, nil)
		if v.Outcome == OutcomeRejected {
			b.Fatalf("typical record rejected: %v", v.Findings)
		}
	}
}

func BenchmarkCheckPlainHCFC(b *testing.B) {
	env := testEnv(b)
	r := baseRecord()
	_ = Check(env, &r, nil)
	b.ReportAllocs()
	for b.Loop() {
		_ = Check(env, &r, nil)
	}
}

func benchCSV(n int) []byte {
	var buf bytes.Buffer
	buf.WriteString(csvHeader + "\n")
	for i := 0; i < n; i++ {
		fmt.Fprintf(&buf, "K-%d,import,CO-1,XA-IMP-2025-001,XB,2025-06-01,HCFC-22,2903.71,75-45-6,CHClF2,13.6,kg,10,servicing,virgin,\n", i)
		fmt.Fprintf(&buf, "L-%d,import,CO-1,XA-IMP-2025-001,XB,2025-06-01,R-404A,3827.61,,,2.5,t,0,servicing,virgin,\"HFC-125=44;HFC-143a=52;HFC-134a=4\"\n", i)
	}
	return buf.Bytes()
}

func BenchmarkCSVRead(b *testing.B) {
	data := benchCSV(5000)
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		rr, err := NewCSVReader(bytes.NewReader(data))
		if err != nil {
			b.Fatal(err)
		}
		n := 0
		for {
			_, le, err := rr.Next()
			if err == io.EOF {
				break
			}
			if err != nil || le != nil {
				b.Fatalf("%v %v", err, le)
			}
			n++
		}
		if n != 10000 {
			b.Fatalf("read %d records", n)
		}
	}
}

func BenchmarkJSONLRead(b *testing.B) {
	var buf bytes.Buffer
	for i := 0; i < 2000; i++ {
		fmt.Fprintf(&buf, `{"record_key":"K-%d","direction":"import","company_id":"CO-1","licence_number":"XA-IMP-2025-001","partner_country":"XB","declaration_date":"2025-06-01","substance":"HCFC-22","total_net_quantity":"136","quantity_unit":"kg","package_count":10}`+"\n", i)
	}
	data := buf.Bytes()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		rr := NewJSONLReader(bytes.NewReader(data))
		for {
			_, le, err := rr.Next()
			if err == io.EOF {
				break
			}
			if err != nil || le != nil {
				b.Fatalf("%v %v", err, le)
			}
		}
	}
}
