package service_test

import (
	"context"
	"slices"
	"testing"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// TestExportPartyStatusPerGroup: Party status is per Annex group (Montreal Protocol Art. 4
// para 9). An R-402A export to a Party bound for HCFCs but not for HFCs deducts the HCFC part
// and not the HFC part (Art. 3 para 1(c)). Countries, company, licences and quantities are
// INVENTED; R-402A is HFC-125/R-290/HCFC-22 at 60/2/38 % by mass (ASHRAE 34); ODP of
// HCFC-22 0.055 (Montreal Protocol Annex C Group I); GWP of HFC-125 3500 (Kigali Amendment,
// Annex F).
//
// Worked by hand, for 1000 kg imported from XB and 1000 kg exported to XE in 2026:
//
//	HCFC-22 (C/I): import 0.38 t, export deducted 0.38 t -> consumption 0 t = 0 ODP t
//	HFC-125 (F/I): import 0.60 t, export to a Party not bound for F/I 0.60 t, not deducted
//	               -> consumption 0.60 t = 0.60 x 3500 = 2100 CO2-eq t
//	not controlled, left out.
//
// Treating the whole export as one to a non-Party (the old reading) would leave HCFC-22 at
// 0.38 t = 0.38 x 0.055 = 0.0209 ODP t.
func TestExportPartyStatusPerGroup(t *testing.T) {
	conn, _ := startTestServer(t)
	shipRegistry(t, conn)
	ctx := context.Background()
	lic := halovetv1.NewLicensingServiceClient(conn)
	bound := map[string]string{"A/I": "1995-01-01", "A/II": "1995-01-01", "B/I": "1997-01-01", "B/II": "1997-01-01",
		"B/III": "1997-01-01", "C/I": "2003-01-01", "C/II": "2003-01-01", "C/III": "2006-01-01", "E/I": "2004-01-01"} // no Annex F
	if _, err := lic.PutParty(ctx, &halovetv1.PutPartyRequest{Party: &halovetv1.Party{CountryCode: "XE",
		Name: "Evandria (invented; not bound for Annex F)", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5,
		HfcGroup: halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1, BoundFrom: bound}}); err != nil {
		t.Fatal(err)
	}
	const exportLicence = "XA-EXP-2026-302"
	if _, err := lic.IssueLicence(ctx, &halovetv1.IssueLicenceRequest{Reason: "test", Licence: &halovetv1.Licence{
		LicenceNumber: exportLicence, CompanyId: shipCompany, Directions: []halovetv1.Direction{halovetv1.Direction_DIRECTION_EXPORT},
		ValidFrom: "2026-01-01", ValidTo: "2026-12-31", Status: halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE,
		QuotaLines: []*halovetv1.QuotaLine{
			{LineNumber: 1, AnnexGroup: "C/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES, AllocatedAmount: "1"},
			{LineNumber: 2, AnnexGroup: "F/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES, AllocatedAmount: "10000"}}}}); err != nil {
		t.Fatal(err)
	}
	imp := shipRecord("PG-IMP")
	imp.Substance, imp.TotalNetQuantity, imp.QuantityUnit, imp.DeclaredHsCode = "R-402A", "1000", "kg", ""
	exp := shipRecord("PG-EXP")
	exp.Substance, exp.TotalNetQuantity, exp.QuantityUnit, exp.DeclaredHsCode = "R-402A", "1000", "kg", ""
	exp.Direction, exp.LicenceNumber, exp.PartnerCountry = halovetv1.Direction_DIRECTION_EXPORT, exportLicence, "XE"
	vs, _ := shipRecordCall(t, halovetv1.NewShipmentServiceClient(conn), imp, exp)
	for _, v := range vs {
		if v.GetOutcome() == halovetv1.Outcome_OUTCOME_REJECTED {
			t.Fatalf("%s rejected: %v", v.GetRecordKey(), v.GetFindings())
		}
	}
	f := vs[1].GetFigures()
	if !slices.Equal(f.GetPartnerNotBoundGroups(), []string{"F/I"}) || !f.GetPartnerNonParty() || !f.GetCountsInConsumption() {
		t.Errorf("export figures: not bound %v, non-Party %v, counts %v; want [F/I], true, true",
			f.GetPartnerNotBoundGroups(), f.GetPartnerNonParty(), f.GetCountsInConsumption())
	}
	if c := shipCodes(vs[1]); !slices.Contains(c, "PARTNER_NOT_BOUND") || slices.Contains(c, "PARTNER_NON_PARTY") {
		t.Errorf("export codes %v; want PARTNER_NOT_BOUND (the Annex F ban starts 2033), no PARTNER_NON_PARTY", c)
	}

	resp, err := halovetv1.NewConsumptionServiceClient(conn).GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2026})
	if err != nil {
		t.Fatal(err)
	}
	groups := map[string]*halovetv1.GroupConsumption{}
	for _, g := range resp.GetGroups() {
		groups[g.GetAnnexGroup()] = g
	}
	ci, fi := groups["C/I"], groups["F/I"]
	if ci == nil || fi == nil {
		t.Fatalf("groups %v; want C/I and F/I", resp.GetGroups())
	}
	consNear(t, "C/I consumption t", ci.GetConsumptionTonnes(), 0)
	consNear(t, "C/I consumption ODP t", ci.GetConsumptionOdpTonnes(), 0)
	consNear(t, "F/I consumption t", fi.GetConsumptionTonnes(), 0.6)
	consNear(t, "F/I consumption CO2-eq t", fi.GetConsumptionCo2ETonnes(), 2100)
	for _, s := range ci.GetSubstances() {
		if s.GetSubstance() == "HCFC-22" {
			consNear(t, "HCFC-22 exports deducted t", s.GetExportTonnes(), 0.38)
			consNear(t, "HCFC-22 exports to non-Parties t", s.GetExportNonPartyTonnes(), 0)
		}
	}
	for _, s := range fi.GetSubstances() {
		if s.GetSubstance() == "HFC-125" {
			consNear(t, "HFC-125 exports deducted t", s.GetExportTonnes(), 0)
			consNear(t, "HFC-125 exports to non-Parties t", s.GetExportNonPartyTonnes(), 0.6)
		}
	}
}
