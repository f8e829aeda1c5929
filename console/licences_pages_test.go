package console_test

import (
	"fmt"
	"regexp"
	"strings"
	"testing"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// The licence register comes in pages of 50 (licencePageSize), linked first and next, as
// the API gives them: 55 more licences of one company make two pages, every licence on
// exactly one of them.
func TestLicenceRegisterPages(t *testing.T) {
	h := newHarness(t, false)
	lic := halovetv1.NewLicensingServiceClient(h.conn)
	for i := range 55 { // invented licences
		if _, err := lic.IssueLicence(h.conn.admin(), &halovetv1.IssueLicenceRequest{Reason: "test", Licence: &halovetv1.Licence{
			LicenceNumber: fmt.Sprintf("XA-PAGE-%02d", i), CompanyId: "XA-1002", Directions: []halovetv1.Direction{halovetv1.Direction_DIRECTION_IMPORT},
			ValidFrom: "2026-01-01", ValidTo: "2026-12-31", Status: halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE,
			QuotaLines: []*halovetv1.QuotaLine{{LineNumber: 1, AnnexGroup: "C/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES, AllocatedAmount: "1"}}}}); err != nil {
			t.Fatal(err)
		}
	}
	all, err := halovetv1.ReadAllPages(h.conn.admin(), lic.ListLicences, &halovetv1.ListLicencesRequest{CompanyId: "XA-1002"}, "licences")
	if err != nil {
		t.Fatal(err)
	}
	n := len(all.GetLicences())
	if n <= 50 || n > 100 {
		t.Fatalf("XA-1002 holds %d licences; the test wants two pages of 50", n)
	}
	c := h.client(t)
	c.signIn("officer")
	numbers := regexp.MustCompile(`<a href="/console/licences/([^"]+)">`)
	seen := map[string]int{}
	p := c.get("/console/licences?company=XA-1002")
	p.mustContain(t, "50 licences on this page", `id="next-page"`)
	for _, m := range numbers.FindAllStringSubmatch(p.body, -1) {
		seen[m[1]]++
	}
	next := regexp.MustCompile(`href="(/console/licences\?[^"]+)" id="next-page"`).FindStringSubmatch(p.body)
	if next == nil {
		t.Fatal("no link to the next page")
	}
	p2 := c.get(strings.ReplaceAll(next[1], "&amp;", "&"))
	p2.mustContain(t, fmt.Sprintf("%d licences on this page of XA-1002", n-50), "First page")
	if strings.Contains(p2.body, `id="next-page"`) {
		t.Errorf("the last page links to a next one")
	}
	for _, m := range numbers.FindAllStringSubmatch(p2.body, -1) {
		seen[m[1]]++
	}
	for _, l := range all.GetLicences() {
		if seen[l.GetLicenceNumber()] != 1 {
			t.Errorf("licence %s shown %d times over the two pages; want once", l.GetLicenceNumber(), seen[l.GetLicenceNumber()])
		}
	}
	if len(seen) != n {
		t.Errorf("the pages show %d licences; the company holds %d", len(seen), n)
	}
}
