package service_test

import (
	"context"
	"fmt"
	"io"
	"net/http"
	"strings"
	"testing"

	"google.golang.org/grpc/codes"

	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// TestReconcilePartnerExports plants three gaps between what partners report as exported to
// us and our recorded imports, beside pairs that agree (exactly, and within the 5 %
// tolerance), and expects exactly the three. Partners, records and figures are INVENTED; the
// default tolerance of 5 % is common practice (from memory).
func TestReconcilePartnerExports(t *testing.T) {
	conn, st := startTestServer(t)
	ctx := context.Background()
	c := halovetv1.NewConsumptionServiceClient(conn)
	consPutParty(t, conn, &halovetv1.Party{CountryCode: "XB", Name: "Borealia (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5,
		HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, ReportingParty: true})
	xa := consRecordFrom(t, st, "XA",
		consShip{"a1", "XB-1", "import", "servicing", "virgin", false, 2025, "HFC-134a", 40},  // XA reports 40: agrees
		consShip{"a2", "XB-1", "import", "servicing", "virgin", false, 2025, "HCFC-22", 20},   // XA reports 22: 10 % off
		consShip{"a3", "XB-1", "import", "servicing", "virgin", false, 2025, "HFC-125", 10},   // XA reports HFC-32 10 instead
		consShip{"a4", "XB-1", "export", "servicing", "virgin", false, 2025, "HFC-134a", 3},   // our export: not compared
		consShip{"a5", "XB-1", "import", "servicing", "virgin", false, 2024, "HCFC-123", 100}, // another year
	)
	consRecordFrom(t, st, "XC",
		consShip{"c1", "XB-2", "import", "servicing", "virgin", false, 2025, "HFC-32", 50}, // XC reports 51: within 5 %
	)
	// XD reports nothing: its import is not compared (missing, not zero) and XD is named.
	consRecordFrom(t, st, "XD",
		consShip{"x1", "XB-3", "import", "servicing", "virgin", false, 2025, "HFC-134a", 8},
	)
	rep := func(key, partner, sub string, t float64) *halovetv1.PartnerExport {
		return &halovetv1.PartnerExport{ReportKey: key, Year: 2025, PartnerCountry: partner, Substance: sub, MetricTonnes: exact.OfFloat(t).String(), Source: "invented partner data report"}
	}
	// A blend must be split first.
	_, err := c.RecordPartnerExports(ctx, &halovetv1.RecordPartnerExportsRequest{Reports: []*halovetv1.PartnerExport{rep("b", "XA", "R-410A", 1)}})
	consCode(t, err, codes.InvalidArgument, "reports[0].substance")
	if _, err := c.RecordPartnerExports(ctx, &halovetv1.RecordPartnerExportsRequest{Reports: []*halovetv1.PartnerExport{
		rep("XA-1", "XA", "HFC-134a", 40),
		rep("XA-2", "XA", "R-22", 22), // synonym of HCFC-22
		rep("XA-3", "XA", "HFC-32", 10),
		rep("XA-4", "XA", "CFC-12", 6), // no import recorded: missing on our side
		rep("XC-1", "XC", "HFC-32", 51),
	}}); err != nil {
		t.Fatal(err)
	}
	got, err := c.ReconcilePartnerExports(ctx, &halovetv1.ReconcilePartnerExportsRequest{Year: 2025})
	if err != nil {
		t.Fatal(err)
	}
	// Expected gaps (partner − recorded): CFC-12 6 − 0 = 6 (missing import); HCFC-22 22 − 20
	// = 2 (> 5 % of 22 = 1.1); HFC-125 0 − 10 = −10 and HFC-32 10 − 0 = 10 (declared as
	// another substance). Agreeing: XA HFC-134a 40/40; XC HFC-32 51/50 (1 ≤ 5 % of 51 = 2.55).
	want := []string{
		"XA CFC-12 6 0 6 [] [XA-4]",
		fmt.Sprintf("XA HCFC-22 22 20 2 [%d] [XA-2]", xa["a2"]),
		fmt.Sprintf("XA HFC-125 0 10 -10 [%d] []", xa["a3"]),
		"XA HFC-32 10 0 10 [] [XA-3]",
	}
	var gotS []string
	for _, g := range got.GetGaps() {
		gotS = append(gotS, fmt.Sprintf("%s %s %s %s %s %v %v", g.GetPartnerCountry(), g.GetSubstance(), g.GetPartnerTonnes(),
			g.GetRecordedTonnes(), g.GetGapTonnes(), g.GetShipmentIds(), g.GetReportKeys()))
	}
	if fmt.Sprint(gotS) != fmt.Sprint(want) {
		t.Errorf("gaps:\n got %q\nwant %q", gotS, want)
	}
	if got.GetPairsCompared() != 6 {
		t.Errorf("pairs compared %d, want 6 (XA: CFC-12, HCFC-22, HFC-125, HFC-134a, HFC-32; XC: HFC-32)", got.GetPairsCompared())
	}
	if fmt.Sprint(got.GetPartnersNotReporting()) != "[XD]" {
		t.Errorf("partners not reporting %v, want [XD]", got.GetPartnersNotReporting())
	}
	_, err = c.ReconcilePartnerExports(ctx, &halovetv1.ReconcilePartnerExportsRequest{Year: 2025, ToleranceRatio: "1.5"})
	consCode(t, err, codes.InvalidArgument, "tolerance")
}

// TestYearPathsOverHTTP: the year report and the reconciliation answer on their HTTP paths
// (google.api.http annotations): GET /v1/year-reports/{year} and
// GET /v1/partner-exports/{year}:reconcile (the registry is shipRegistry's, invented).
func TestYearPathsOverHTTP(t *testing.T) {
	_, base, httpClient := startHTTPTestServer(t)
	for _, path := range []string{"/v1/year-reports/2025", "/v1/partner-exports/2025:reconcile?tolerance_ratio=0.1"} {
		resp, err := httpClient().Get(base + path)
		if err != nil {
			t.Fatal(err)
		}
		raw, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		if resp.StatusCode != http.StatusOK || !strings.Contains(string(raw), "2025") {
			t.Errorf("GET %s: %d %s; want 200 with the year", path, resp.StatusCode, raw)
		}
	}
}
