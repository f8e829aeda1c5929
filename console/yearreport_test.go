package console_test

import (
	"encoding/json"
	"net/http"
	"regexp"
	"strings"
	"testing"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

var ciRowRE = regexp.MustCompile(`<tr><th scope="row">C/I</th>((?:<td class="num">[^<]*</td>\s*)+)</tr>`)
var numCellRE = regexp.MustCompile(`<td class="num">([^<]*)</td>`)

// TestYearReport: the year page says whether its last year is open (provisional) or
// closed, and shows the annual data report (GetYearReport) when asked, with a JSON download.
func TestYearReport(t *testing.T) {
	h := newHarness(t, false)
	c := h.client(t)
	c.signIn("officer")
	p := c.get("/console/year?group=C/I&from=2021&to=2025")
	p.mustContain(t, `<strong>open</strong>: its figures are provisional`, `id="show-report"`)
	if strings.Contains(p.body, `id="report-heading"`) {
		t.Errorf("the report is shown without being asked for")
	}
	p = c.get("/console/year?group=C/I&from=2021&to=2025&report=1")
	p.mustContain(t, `id="report-heading">Annual data report of 2025 (XA)`, `id="report-state">provisional`, `id="report-json"`, "Imports by exporting country", "no data (not zero)")
	// C/I in 2025, from testdata/demo/national_entries.csv: 60 t HCFC-22 + 9 t HCFC-141b =
	// 69 t imported; at ODP 0.055 and 0.11 (Montreal Protocol Annex C Group I) 3.3 + 0.99 =
	// 4.29 ODP t.
	row := ciRowRE.FindStringSubmatch(p.body[strings.Index(p.body, `id="report-heading"`):])
	if row == nil {
		t.Fatalf("no C/I row in the report's totals:\n%s", p.body)
	}
	cells := numCellRE.FindAllStringSubmatch(row[1], -1)
	if len(cells) != 10 || cells[1][1] != "69" || cells[7][1] != "69" || cells[8][1] != "4.29" {
		t.Errorf("C/I totals %v; want imports 69, consumption 69 t and 4.29 ODP t", cells)
	}

	// The JSON download: the project's JSON dialect (snake_case keys, zeros kept, enums as
	// words), the same bytes twice.
	j := c.get("/console/year/report.json?year=2025")
	if j.code != 200 || j.hdr.Get("Content-Type") != "application/json" || !strings.Contains(j.hdr.Get("Content-Disposition"), "year-report-2025.json") {
		t.Fatalf("report.json: %d %s %s", j.code, j.hdr.Get("Content-Type"), j.hdr.Get("Content-Disposition"))
	}
	var rep struct {
		Year   int    `json:"year"`
		State  string `json:"state"`
		Groups []struct {
			AnnexGroup string `json:"annex_group"`
			HasData    *bool  `json:"has_data"`
		} `json:"groups"`
	}
	if err := json.Unmarshal([]byte(j.body), &rep); err != nil || rep.Year != 2025 || rep.State != "provisional" || len(rep.Groups) == 0 {
		t.Errorf("report.json: %v %+v", err, rep)
	}
	for _, g := range rep.Groups {
		if g.AnnexGroup == "" || g.HasData == nil {
			t.Errorf("report.json: a group without annex_group or has_data (zeros are kept): %+v", g)
		}
	}
	if strings.Contains(j.body, "REPORT_STATE_") || strings.Contains(j.body, `"annexGroup"`) {
		t.Errorf("report.json is protobuf JSON, not the project's dialect:\n%.400s", j.body)
	}
	if j2 := c.get("/console/year/report.json?year=2025"); j2.body != j.body {
		t.Errorf("report.json differs between two downloads of the same register")
	}
	if bad := c.get("/console/year/report.json?year=soon"); bad.code != http.StatusBadRequest || !strings.Contains(bad.body, "calendar year") {
		t.Errorf("report.json?year=soon: %d", bad.code)
	}

	// Closed: the page and the report say so.
	if _, err := halovetv1.NewShipmentServiceClient(h.conn).CloseYear(h.conn.admin(), &halovetv1.CloseYearRequest{Year: 2025, Reason: "figures sent (invented)"}); err != nil {
		t.Fatal(err)
	}
	p = c.get("/console/year?group=C/I&from=2021&to=2025&report=1")
	p.mustContain(t, `<strong>closed</strong> since`, "figures sent (invented)", `id="report-state">closed`, "stays the same until it is reopened")
	if j := c.get("/console/year/report.json?year=2025"); !strings.Contains(j.body, `"state": "closed"`) {
		t.Errorf("report.json of the closed year does not say closed:\n%.400s", j.body)
	}
	// The current year stays open.
	c.get("/console/year?group=C/I&from=2022&to=2026").mustContain(t, "2026 is <strong>open</strong>")

	// The auditor reads the report; a trader may not (GetYearReport: officer and auditor).
	a := h.client(t)
	a.signIn("auditor")
	a.get("/console/year?group=C/I&from=2021&to=2025&report=1").mustContain(t, `id="report-state">closed`)
	tr := h.client(t)
	tr.signIn("trader")
	if p := tr.get("/console/year/report.json?year=2025"); p.code != http.StatusForbidden || !strings.Contains(p.body, "Not allowed for your role") {
		t.Errorf("trader's report.json: %d", p.code)
	}
}
