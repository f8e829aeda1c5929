package console_test

import (
	"bytes"
	"io"
	"mime/multipart"
	"net/http"
	"net/url"
	"os"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/halovet/halovet/console"
	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

func licenceStatus(t *testing.T, h *harness, number string) halovetv1.LicenceStatus {
	t.Helper()
	resp, err := halovetv1.NewLicensingServiceClient(h.conn).GetLicence(h.conn.admin(), &halovetv1.GetLicenceRequest{LicenceNumber: number})
	if err != nil {
		t.Fatal(err)
	}
	return resp.GetLicence().GetStatus()
}

func TestSignInAndPages(t *testing.T) {
	h := newHarness(t, false)
	c := h.client(t)
	// Not signed in: sent to the sign-in page.
	p := c.get("/console/licences")
	if p.code != http.StatusOK || !strings.Contains(p.body, `<label for="secret">Access token</label>`) {
		t.Fatalf("a page without a session: %d, want the sign-in page\n%s", p.code, p.body)
	}
	// A wrong secret is refused and says so.
	form := c.get("/console/sign-in")
	p = c.post("/console/sign-in", url.Values{"csrf": {form.csrf(t)}, "secret": {"hvk1_0000000000000000_AAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAA"}})
	if p.code != http.StatusUnauthorized || !strings.Contains(p.body, "not valid") {
		t.Errorf("wrong secret: %d", p.code)
	}
	c.signIn("officer").mustContain(t, "Olu Officer (invented)", "Licence register", "Shipment batches", "The year")

	// Catalogue: an exact designation, then a near miss with "did you mean".
	p = c.get("/console/catalogue?q=R-134a")
	p.mustContain(t, `href="/console/catalogue/entries/HFC-134a"`)
	p = c.get("/console/catalogue?q=R410")
	if !strings.Contains(p.body, `id="no-match"`) || !strings.Contains(p.body, `id="did-you-mean"`) || !strings.Contains(p.body, `href="/console/catalogue?q=R-410A"`) {
		t.Errorf("no 'did you mean R-410A' for R410:\n%s", p.body)
	}
	// A substance: ODP, GWPs, HS codes, Annex group, safety class (ASHRAE 34: R-32 is A2L)
	// and the cautions of a flammable class.
	p = c.get("/console/catalogue/entries/HFC-32")
	p.mustContain(t, "GWPs by set", "HS codes", "F/I", `id="safety-class">A2L`, "Safety cautions", console.Notice)
	// Exact figures: HFC-134a's ODP is shown as 0 (Montreal Protocol Annex F: no ODP) and its
	// molar mass as 102.03 g/mol (IUPAC standard atomic weights, conventional values:
	// 2×12.011 + 2×1.008 + 4×18.998).
	p = c.get("/console/catalogue/entries/HFC-134a")
	p.mustContain(t, "<dt>ODP</dt><dd>0</dd>", "102.03 g/mol", ">1430<")
	// The wire enums read as words: the GWP set (IPCC AR4 WG1 Table 2.14: HFC-134a 1430) and
	// the HS edition (WCO HS 2022: 2903.45), not GWP_SET_IPCC_AR4 or HS_EDITION_HS_2022.
	p.mustContain(t, `<th scope="row">AR4</th>`, `<th scope="row">HS2022</th><td>2903.45</td>`)
	// A blend: its composition (R-410A: HFC-32 50 % and HFC-125 50 %, ASHRAE 34) and its
	// AR4 GWP 2087.5 (UK government CO2-eq table, testdata/reference/blends.csv).
	p = c.get("/console/catalogue/entries/R-410A")
	p.mustContain(t, "Composition", `href="/console/catalogue/entries/HFC-32"`, `href="/console/catalogue/entries/HFC-125"`, ">50<", ">2087.5<")
	p.mustContain(t, "blend (zeotrope)", "<td>annex-f-only</td>")
	if hit := regexp.MustCompile(`GWP_SET_|GWP_CONVENTION_|HS_EDITION_|BLEND_TYPE_`).FindString(p.body); hit != "" {
		t.Errorf("R-410A page shows the enum name %q where a word belongs", hit)
	}
	if hit := regexp.MustCompile(`\d\.\d*0000000\d|\d\.\d*9999999\d`).FindString(p.body); hit != "" {
		t.Errorf("R-410A page shows binary-float noise %q", hit)
	}
	if p = c.get("/console/catalogue/entries/NO-SUCH-THING"); p.code != http.StatusNotFound {
		t.Errorf("unknown entry: %d, want 404", p.code)
	}

	// The register: the demo's licences with their quota lines (scenario.json: 3.5 ODP t of
	// C/I on XA-IMP-2026-001).
	p = c.get("/console/licences")
	p.mustContain(t, "XA-IMP-2026-001", "XA-IMP-2026-002", "3.5 ODP t", "Share used")
	p = c.get("/console/licences/XA-IMP-2026-001")
	p.mustContain(t, "Quota lines", `id="licence-status">active`, "Suspend the licence")

	// The year: compliance of C/I with the chart, and the chart itself.
	p = c.get("/console/year?group=C/I&from=2022&to=2026")
	p.mustContain(t, `<img src="/console/year/chart.svg?from=2022&amp;group=C%2FI&amp;to=2026"`, `class="compliance-not-assessed"`, "Baseline of C/I", "2026 (provisional)")
	svg := c.get("/console/year/chart.svg?group=C/I&from=2022&to=2026")
	if svg.code != 200 || svg.hdr.Get("Content-Type") != "image/svg+xml" || !strings.Contains(svg.body, "Xandria (invented, reporting Party): Annex C Group I (HCFCs)") {
		t.Errorf("chart.svg: %d %s\n%.400s", svg.code, svg.hdr.Get("Content-Type"), svg.body)
	}
	png := c.get("/console/year/chart.png?group=F&from=2024&to=2026")
	if png.code != 200 || !strings.HasPrefix(png.body, "\x89PNG") {
		t.Errorf("chart.png: %d", png.code)
	}
	if p = c.get("/console/year?group=Z/Z"); p.code != http.StatusBadRequest || !strings.Contains(p.body, "give an Annex group") {
		t.Errorf("bad group: %d", p.code)
	}

	// Suspend with the form, then reinstate.
	p = c.get("/console/licences/XA-IMP-2026-001")
	p = c.post("/console/licences/XA-IMP-2026-001/status", url.Values{"csrf": {p.csrf(t)}, "status": {"suspended"}, "reason": {"console test"}})
	if p.code != 200 || licenceStatus(t, h, "XA-IMP-2026-001") != halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED {
		t.Fatalf("suspend: %d, status %v", p.code, licenceStatus(t, h, "XA-IMP-2026-001"))
	}
	p.mustContain(t, "Reinstate the licence")
	p = c.post("/console/licences/XA-IMP-2026-001/status", url.Values{"csrf": {p.csrf(t)}, "status": {"active"}, "reason": {"console test"}})
	if licenceStatus(t, h, "XA-IMP-2026-001") != halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE {
		t.Fatalf("reinstate: %d", p.code)
	}

	// Amend an allocation (scenario.json: line 1 of XA-IMP-2026-001 holds 3.5 ODP t), and
	// the server's refusal of a bad one shown as a page.
	p = c.get("/console/licences/XA-IMP-2026-001")
	p = c.post("/console/licences/XA-IMP-2026-001/quota", url.Values{"csrf": {p.csrf(t)}, "line": {"1"}, "allocated": {"4.25"}, "reason": {"console test"}})
	resp, err := halovetv1.NewLicensingServiceClient(h.conn).GetLicence(h.conn.admin(), &halovetv1.GetLicenceRequest{LicenceNumber: "XA-IMP-2026-001"})
	if err != nil {
		t.Fatal(err)
	}
	if got := resp.GetLicence().GetQuotaLines()[0].GetAllocatedAmount(); p.code != 200 || got != "4.25" {
		t.Errorf("amend: %d, line 1 allocated_amount %q; want 4.25", p.code, got)
	}
	p = c.post("/console/licences/XA-IMP-2026-001/quota", url.Values{"csrf": {p.csrf(t)}, "line": {"1"}, "allocated": {"lots"}, "reason": {"console test"}})
	if p.code != http.StatusBadRequest || !strings.Contains(p.body, "Nothing was changed") {
		t.Errorf("amend with a bad figure: %d", p.code)
	}
	// A decimal comma is refused, not read as 425.
	p = c.post("/console/licences/XA-IMP-2026-001/quota", url.Values{"csrf": {p.csrf(t)}, "line": {"1"}, "allocated": {"4,25"}, "reason": {"console test"}})
	if p.code != http.StatusBadRequest || !strings.Contains(p.body, "no separators") {
		t.Errorf("amend with a decimal comma: %d; want 400 saying a decimal with a point and no separators", p.code)
	}

	// Sign out: the session is gone on the server too.
	home := c.get("/console/")
	p = c.post("/console/sign-out", url.Values{"csrf": {home.csrf(t)}})
	p.mustContain(t, "You are signed out")
	if p = c.get("/console/licences"); !strings.Contains(p.body, `name="secret"`) {
		t.Errorf("after sign-out the register is still shown")
	}
}

// upload posts a file to the batch form and follows the batch page until it is done.
func (c *client) upload(t *testing.T, path string) page {
	t.Helper()
	form := c.get("/console/batches")
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var body bytes.Buffer
	mw := multipart.NewWriter(&body)
	_ = mw.WriteField("csrf", form.csrf(t))
	_ = mw.WriteField("format", "auto")
	fw, _ := mw.CreateFormFile("file", "shipments.csv")
	_, _ = fw.Write(data)
	_ = mw.Close()
	resp, err := c.http.Post(c.h.url+"/console/batches", mw.FormDataContentType(), &body)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	return c.follow(t, page{resp.StatusCode, string(b), resp.Header, resp.Request.URL.RequestURI()})
}

// follow reloads a batch page until its verdicts are in.
func (c *client) follow(t *testing.T, p page) page {
	t.Helper()
	deadline := time.Now().Add(2 * time.Minute)
	for strings.Contains(p.body, `http-equiv="refresh"`) {
		if time.Now().After(deadline) {
			t.Fatalf("the batch did not finish in 2 minutes")
		}
		time.Sleep(200 * time.Millisecond)
		p = c.get(p.path)
	}
	return p
}

var countRE = regexp.MustCompile(`id="count-([a-z]+)">(\d+)<`)

func counts(p page) map[string]int {
	out := map[string]int{}
	for _, m := range countRE.FindAllStringSubmatch(p.body, -1) {
		n, _ := strconv.Atoi(m[2])
		out[m[1]] = n
	}
	return out
}

func drawn(t *testing.T, h *harness, number string) float64 {
	t.Helper()
	resp, err := halovetv1.NewLicensingServiceClient(h.conn).GetLicence(h.conn.admin(), &halovetv1.GetLicenceRequest{LicenceNumber: number})
	if err != nil {
		t.Fatal(err)
	}
	var sum float64
	for _, q := range resp.GetLicence().GetQuotaLines() {
		d, err := exact.Parse(q.GetDrawnAmount())
		if err != nil {
			t.Fatalf("drawn_amount %q: %v", q.GetDrawnAmount(), err)
		}
		sum += d.Float64()
	}
	return sum
}

func TestBatchCheckFilterReportAndRecord(t *testing.T) {
	h := newHarness(t, false)
	want := goldenCounts(t)
	c := h.client(t)
	c.signIn("officer")
	p := c.upload(t, repoFile(t, "testdata/demo/shipments.csv"))
	got := counts(p)
	if got["records"] != want["Records"] || got["accepted"] != want["accepted"] || got["warnings"] != want["accepted with warnings"] || got["rejected"] != want["rejected"] {
		t.Fatalf("counts %v; the golden summary says %v", got, want)
	}
	path := regexp.MustCompile(`action="(/console/batches/[^"/]+)/record"`).FindStringSubmatch(p.body)
	if path == nil {
		t.Fatalf("no record form for the officer:\n%s", p.body)
	}
	// Filters: by outcome, then by one code (KEY_MISSING fires on line 6 of the demo file,
	// testdata/demo/golden/check-report.csv).
	f := c.get(path[1] + "?outcome=rejected")
	if !strings.Contains(f.body, strconv.Itoa(want["rejected"])+" of "+strconv.Itoa(want["Records"])+" lines shown") {
		t.Errorf("rejected filter: %s", regexp.MustCompile(`id="shown">[^<]*`).FindString(f.body))
	}
	f = c.get(path[1] + "?code=KEY_MISSING")
	if !strings.Contains(f.body, "1 of "+strconv.Itoa(want["Records"])+" lines shown") || !strings.Contains(f.body, `<td class="num">6</td>`) {
		t.Errorf("KEY_MISSING filter: %s", regexp.MustCompile(`id="shown">[^<]*`).FindString(f.body))
	}
	rep := c.get(path[1] + "/report.csv")
	if rep.code != 200 || rep.hdr.Get("Content-Type") != "text/csv; charset=utf-8" || strings.Count(rep.body, "\n") < want["Records"]+1 {
		t.Errorf("report: %d %s, %d lines", rep.code, rep.hdr.Get("Content-Type"), strings.Count(rep.body, "\n"))
	}
	before := drawn(t, h, "XA-IMP-2026-002")
	r := c.follow(t, c.post(path[1]+"/record", url.Values{"csrf": {p.csrf(t)}}))
	if r.path == path[1] {
		t.Fatalf("recording stayed on the check's page")
	}
	rc := counts(r)
	if rc["records"] != want["Records"] || rc["recorded"] == 0 {
		t.Errorf("recording counts %v", rc)
	}
	// Each recorded line links to its shipment's page.
	link := regexp.MustCompile(`<a href="(/console/shipments/\d+)">yes, shipment \d+</a>`).FindAllStringSubmatch(r.body, -1)
	if len(link) != rc["recorded"] {
		t.Errorf("%d links to recorded shipments; %d recorded", len(link), rc["recorded"])
	} else if s := c.get(link[0][1]); s.code != 200 || !strings.Contains(s.body, "Verdict as recorded") {
		t.Errorf("%s: %d", link[0][1], s.code)
	}
	if after := drawn(t, h, "XA-IMP-2026-002"); after <= before {
		t.Errorf("XA-IMP-2026-002 drawn %v before recording, %v after; want more", before, after)
	}
	// A batch recorded once offers no second recording.
	again := c.post(path[1]+"/record", url.Values{"csrf": {p.csrf(t)}})
	if again.code != http.StatusConflict {
		t.Errorf("second recording: %d, want 409", again.code)
	}
}
