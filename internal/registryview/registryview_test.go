package registryview_test

import (
	"testing"

	"github.com/halovet/halovet/internal/registryview"
	"github.com/halovet/halovet/internal/servertest"
	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

func TestMain(m *testing.M) { pgtest.Main(m) }

// TestReportingPartyName: "" while no Party reports; the reporting Party's name once one
// does, found on whichever page it is (one Party to a page). The Parties are invented.
func TestReportingPartyName(t *testing.T) {
	ts := servertest.Start(t, "halovet_registryview", service.Options{OpenAccess: true})
	lc := halovetv1.NewLicensingServiceClient(ts.Conn)
	put := func(code, name string, reporting bool) {
		t.Helper()
		if _, err := lc.PutParty(t.Context(), &halovetv1.PutPartyRequest{Party: &halovetv1.Party{
			CountryCode: code, Name: name, PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5,
			HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, ReportingParty: reporting}}); err != nil {
			t.Fatal(err)
		}
	}
	put("XB", "Borealia (invented)", false)
	if name, err := registryview.ReportingPartyName(t.Context(), lc, 1); err != nil || name != "" {
		t.Errorf("no reporting Party: %q, %v; want \"\"", name, err)
	}
	put("XC", "Cendria (invented)", false)
	put("XD", "Dravia (invented)", true)
	if name, err := registryview.ReportingPartyName(t.Context(), lc, 1); err != nil || name != "Dravia (invented)" {
		t.Errorf("the reporting Party on the third page: %q, %v; want Dravia (invented)", name, err)
	}
}
