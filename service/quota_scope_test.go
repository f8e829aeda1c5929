package service_test

import (
	"context"
	"slices"
	"testing"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// A quota line for Annex F as a whole and an allowance limited to critical use travel through
// IssueLicence and ListLicences, and recorded shipments draw on them (INVENTED licence).
func TestQuotaLineScopes(t *testing.T) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	ctx := context.Background()
	lic := halovetv1.NewLicensingServiceClient(conn)
	const num = "XA-IMP-2026-310"
	l := &halovetv1.Licence{LicenceNumber: num, CompanyId: shipCompany, Directions: []halovetv1.Direction{halovetv1.Direction_DIRECTION_IMPORT},
		ValidFrom: "2026-01-01", ValidTo: "2026-12-31", Status: halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE,
		QuotaLines: []*halovetv1.QuotaLine{
			{LineNumber: 1, AnnexGroup: "F", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES, AllocatedAmount: "10000"},
			{LineNumber: 2, AnnexGroup: "E/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_METRIC_TONNES, AllocatedAmount: "0.5",
				Purposes: []halovetv1.Purpose{halovetv1.Purpose_PURPOSE_CRITICAL_USE}}}}
	if _, err := lic.IssueLicence(ctx, &halovetv1.IssueLicenceRequest{Licence: l, Reason: "test"}); err != nil {
		t.Fatalf("IssueLicence: %v", err)
	}
	got, err := lic.ListLicences(ctx, &halovetv1.ListLicencesRequest{CompanyId: shipCompany})
	if err != nil {
		t.Fatal(err)
	}
	var back *halovetv1.Licence
	for _, x := range got.GetLicences() {
		if x.GetLicenceNumber() == num {
			back = x
		}
	}
	if back == nil || len(back.GetQuotaLines()) != 2 || back.GetQuotaLines()[0].GetAnnexGroup() != "F" ||
		!slices.Equal(back.GetQuotaLines()[1].GetPurposes(), []halovetv1.Purpose{halovetv1.Purpose_PURPOSE_CRITICAL_USE}) {
		t.Fatalf("licence read back as %v", back)
	}

	client := halovetv1.NewShipmentServiceClient(conn)
	blend := shipRecord("S-1") // R-410A 1 t = 2087.5 CO2-eq t (Annex F GWPs, ASHRAE 34 composition)
	blend.LicenceNumber, blend.Substance, blend.TotalNetQuantity, blend.QuantityUnit = num, "R-410A", "1", "t"
	hfc23 := shipRecord("S-2") // HFC-23 (Annex F Group II, GWP 14800: Montreal Protocol Annex F) 10 kg = 148 CO2-eq t
	hfc23.LicenceNumber, hfc23.Substance, hfc23.TotalNetQuantity = num, "HFC-23", "10"
	mbr := shipRecord("S-3") // methyl bromide 400 kg for an authorised critical use = 0.4 t on the allowance
	mbr.LicenceNumber, mbr.Substance, mbr.TotalNetQuantity, mbr.Purpose = num, "methyl bromide", "400", halovetv1.Purpose_PURPOSE_CRITICAL_USE
	vs, _ := shipRecordCall(t, client, blend, hfc23, mbr)
	for i, v := range vs {
		if !v.GetRecorded() {
			t.Errorf("record %d not recorded: %v", i+1, shipCodes(v))
		}
	}
	if d, s := shipLineDrawn(t, st, num, 1); d != "2235.500000000" || s != d {
		t.Errorf("Annex F line drawn %s, draws %s; want 2235.500000000 (2087.5 + 148)", d, s)
	}
	if d, s := shipLineDrawn(t, st, num, 2); d != "0.400000000" || s != d {
		t.Errorf("critical-use allowance drawn %s, draws %s; want 0.400000000", d, s)
	}

	// Bad lines: Annex F as a whole in ODP t, an unspecified purpose.
	bad := &halovetv1.Licence{LicenceNumber: "XA-IMP-2026-311", CompanyId: shipCompany, Directions: []halovetv1.Direction{halovetv1.Direction_DIRECTION_IMPORT},
		ValidFrom: "2026-01-01", ValidTo: "2026-12-31",
		QuotaLines: []*halovetv1.QuotaLine{
			{LineNumber: 1, AnnexGroup: "F", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES, AllocatedAmount: "1"},
			{LineNumber: 2, AnnexGroup: "E/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_METRIC_TONNES, AllocatedAmount: "1",
				Purposes: []halovetv1.Purpose{halovetv1.Purpose_PURPOSE_UNSPECIFIED}}}}
	_, err = lic.IssueLicence(ctx, &halovetv1.IssueLicenceRequest{Licence: bad, Reason: "test"})
	if status.Code(err) != codes.InvalidArgument {
		t.Fatalf("bad lines: %v; want InvalidArgument", err)
	}
	fields := catalogueViolatedFields(status.Convert(err))
	for _, want := range []string{"licence.quota_lines[0].unit", "licence.quota_lines[1].purposes[0]"} {
		if !slices.Contains(fields, want) {
			t.Errorf("violations %v; want %s", fields, want)
		}
	}
}
