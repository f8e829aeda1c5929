package console_test

import (
	"net/url"
	"regexp"
	"strings"
	"testing"
)

var historyRowRE = regexp.MustCompile(`<tr class="event-([a-z ]+)"><th scope="row">([0-9-]+)</th>`)

// TestLicenceHistory: the licence page lists the licence's history (ListLicenceHistory) in
// the order it was recorded, and a change made with the console's form is in it with its
// reason.
func TestLicenceHistory(t *testing.T) {
	h := newHarness(t, false)
	c := h.client(t)
	c.signIn("officer")
	p := c.get("/console/licences/XA-IMP-2026-005")
	// scenario.json: XA-IMP-2026-005 is issued, then suspended from 2026-09-15.
	p.mustContain(t, `id="history-heading">History`, "suspended from 2026-09-15")
	rows := historyRowRE.FindAllStringSubmatch(p.body, -1)
	var kinds []string
	for _, r := range rows {
		kinds = append(kinds, r[1]+" "+r[2])
	}
	if len(kinds) < 2 || !strings.HasPrefix(kinds[0], "issued ") || kinds[len(kinds)-1] != "suspended 2026-09-15" {
		t.Errorf("history of XA-IMP-2026-005: %v; want issued first and the suspension of 2026-09-15 last", kinds)
	}

	// A suspension made with the form is the newest entry, with its reason and today's date
	// (the server's clock: demoToday).
	p = c.get("/console/licences/XA-IMP-2026-001")
	n := len(historyRowRE.FindAllString(p.body, -1))
	p = c.post("/console/licences/XA-IMP-2026-001/status", url.Values{"csrf": {p.csrf(t)}, "status": {"suspended"}, "reason": {"history test (invented)"}})
	rows = historyRowRE.FindAllStringSubmatch(p.body, -1)
	if len(rows) != n+1 || rows[len(rows)-1][1] != "suspended" || rows[len(rows)-1][2] != demoToday.Format("2006-01-02") {
		t.Errorf("after the suspension the history has %d rows (was %d), last %v", len(rows), n, rows[len(rows)-1])
	}
	p.mustContain(t, "history test (invented) (console, Olu Officer (invented))")
	p.mustContain(t, `<a href="/console/shipments?licence=XA-IMP-2026-001" id="licence-shipments">`)

	// The auditor reads it too (ListLicenceHistory: officer, customs, trader, auditor).
	a := h.client(t)
	a.signIn("auditor")
	a.get("/console/licences/XA-IMP-2026-001").mustContain(t, "history test (invented)")
	// A trader reads its own licence's history (XA-IMP-2026-002 is XA-1002's).
	tr := h.client(t)
	tr.signIn("trader")
	tr.get("/console/licences/XA-IMP-2026-002").mustContain(t, `id="history-heading">History`, "issued")
}
