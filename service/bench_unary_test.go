package service

import (
	"bytes"
	"context"
	"errors"
	"io"
	"log/slog"
	"testing"
	"time"

	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/validate"
)

// BenchmarkCheckShipmentHandler calls the unary CheckShipment handler in process, without
// gRPC, for each record of the shipment benchmarks' batch in turn (bench_test.go): what a
// unary check costs the server beside the streamed per-record cost of the same records.
// The registry is the shipment benchmarks' invented one (user-assigned codes).
func BenchmarkCheckShipmentHandler(b *testing.B) {
	ctx := context.Background()
	url := pgtest.NewDatabase(b, "halovet_service", func(ctx context.Context, url string) error {
		_, err := store.Migrate(ctx, url)
		return err
	})
	st, err := store.Open(ctx, url)
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(st.Close)
	log := slog.New(slog.NewTextHandler(io.Discard, nil))
	cat, err := LoadCatalogue(ctx, st, log)
	if err != nil {
		b.Fatal(err)
	}
	srv := New(st, cat, Options{Logger: log, Now: func() time.Time { return time.Date(2026, 7, 1, 12, 0, 0, 0, time.UTC) }})
	lic := &licensingServer{srv: srv}
	bound := map[string]string{"C/I": "2000-01-01", "F/I": "2021-01-01", "F/II": "2021-01-01"}
	for _, p := range []*halovetv1.Party{
		{CountryCode: "XA", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5, HfcGroup: halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1, ReportingParty: true, BoundFrom: bound},
		{CountryCode: "XB", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5, HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, BoundFrom: bound},
		{CountryCode: "XC", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5, HfcGroup: halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1, BoundFrom: bound},
	} {
		if _, err := lic.PutParty(ctx, &halovetv1.PutPartyRequest{Party: p}); err != nil {
			b.Fatal(err)
		}
	}
	if _, err := lic.RegisterCompany(ctx, &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{CompanyId: "XA-8001", Name: "Benchmark importer (invented)"}}); err != nil {
		b.Fatal(err)
	}
	if _, err := lic.IssueLicence(ctx, &halovetv1.IssueLicenceRequest{Reason: "benchmark", Licence: &halovetv1.Licence{
		LicenceNumber: "XA-IMP-2026-801", CompanyId: "XA-8001", Directions: []halovetv1.Direction{halovetv1.Direction_DIRECTION_IMPORT},
		ValidFrom: "2026-01-01", ValidTo: "2026-12-31",
		QuotaLines: []*halovetv1.QuotaLine{
			{LineNumber: 1, AnnexGroup: "C/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES, AllocatedAmount: "1000000000"},
			{LineNumber: 2, AnnexGroup: "F/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES, AllocatedAmount: "1000000000"}}}}); err != nil {
		b.Fatal(err)
	}
	rd, err := validate.NewCSVReader(bytes.NewReader(benchBatchCSV()))
	if err != nil {
		b.Fatal(err)
	}
	var reqs []*halovetv1.CheckShipmentRequest
	for {
		r, le, err := rd.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil || le != nil {
			b.Fatal(err, le)
		}
		reqs = append(reqs, &halovetv1.CheckShipmentRequest{Record: RecordToProto(&r)})
	}
	x := &shipmentServer{srv: srv}
	b.ReportAllocs()
	total := 0
	for i := 0; b.Loop(); i++ {
		resp, err := x.CheckShipment(ctx, reqs[i%len(reqs)])
		if err != nil {
			b.Fatal(err)
		}
		if v := resp.GetVerdict(); v.GetOutcome() == halovetv1.Outcome_OUTCOME_REJECTED {
			b.Fatalf("record %s rejected: %v", v.GetRecordKey(), v.GetFindings())
		}
		total++
	}
	b.ReportMetric(float64(total)/b.Elapsed().Seconds(), "records/s")
}

// benchBatchCSV is the six record templates of the shipment benchmarks (bench_test.go, in
// the external test package, so not shared),
// one record each.
func benchBatchCSV() []byte {
	return []byte(`record_key,direction,company_id,licence_number,partner_country,declaration_date,substance,declared_hs_code,declared_cas_number,declared_formula,total_net_quantity,quantity_unit,package_count,purpose,condition,declared_composition
H-1,import,XA-8001,XA-IMP-2026-801,XB,2026-06-15,HCFC-22,2903.71,75-45-6,,13.6,kg,10,servicing,,
H-2,import,XA-8001,XA-IMP-2026-801,XB,2026-06-16,R-404A,3827.61,,,10.9,kg,20,servicing,,
H-3,import,XA-8001,XA-IMP-2026-801,XC,2026-06-17,R-410A,,,,11.3,kg,40,servicing,,
H-4,import,XA-8001,XA-IMP-2026-801,XB,2026-06-18,R-404A,,,,2.5,t,0,servicing,,"HFC-125=44;HFC-143a=52;HFC-134a=4"
H-5,import,XA-8001,XA-IMP-2026-801,XC,2026-06-19,R-32,2903.42,75-10-5,,9,kg,30,servicing,,
H-6,import,XA-8001,XA-IMP-2026-801,XB,2026-06-20,R-134a,,,,30,lb,24,servicing,recycled,
`)
}
