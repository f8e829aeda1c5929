package console_test

import (
	"fmt"
	"math"
	"net/http"
	"net/url"
	"regexp"
	"strings"
	"testing"

	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// recordSome records invented shipments of the demo scenario's two importers through the
// API (rows modelled on testdata/demo/shipments.csv): two of XA-1002 on XA-IMP-2026-002 and
// one of XA-1001 on XA-IMP-2026-001. It returns the shipment ids by record key.
func recordSome(t *testing.T, h *harness) map[string]int64 {
	t.Helper()
	rec := func(key, company, licence, date, substance, qty string) *halovetv1.ShipmentRecord {
		return &halovetv1.ShipmentRecord{RecordKey: key, Direction: halovetv1.Direction_DIRECTION_IMPORT, CompanyId: company,
			LicenceNumber: licence, PartnerCountry: "XC", DeclarationDate: date, Substance: substance,
			TotalNetQuantity: qty, QuantityUnit: "kg", Purpose: halovetv1.Purpose_PURPOSE_SERVICING}
	}
	resp, err := halovetv1.NewShipmentServiceClient(h.conn).RecordShipmentBatch(h.conn.admin(), &halovetv1.RecordShipmentBatchRequest{Records: []*halovetv1.ShipmentRecord{
		rec("T-CHC-1", "XA-1002", "XA-IMP-2026-002", "2026-02-03", "HCFC-22", "700"),
		rec("T-CHC-2", "XA-1002", "XA-IMP-2026-002", "2026-02-04", "HCFC-22", "300"),
		rec("T-FRL-1", "XA-1001", "XA-IMP-2026-001", "2026-02-05", "HCFC-22", "150"),
	}})
	if err != nil {
		t.Fatal(err)
	}
	ids := map[string]int64{}
	for _, v := range resp.GetVerdicts() {
		if !v.GetRecorded() {
			t.Fatalf("%s not recorded: %v %v", v.GetRecordKey(), v.GetOutcome(), v.GetFindings())
		}
		ids[v.GetRecordKey()] = v.GetShipmentId()
	}
	return ids
}

func shipmentState(t *testing.T, h *harness, id int64) halovetv1.ShipmentState {
	t.Helper()
	resp, err := halovetv1.NewShipmentServiceClient(h.conn).GetShipment(h.conn.admin(), &halovetv1.GetShipmentRequest{ShipmentId: id})
	if err != nil {
		t.Fatal(err)
	}
	return resp.GetShipment().GetState()
}

var companyCellRE = regexp.MustCompile(`<td class="company">([^<]*)</td>`)

func TestShipmentsSearchOpenAndVoid(t *testing.T) {
	h := newHarness(t, false)
	ids := recordSome(t, h)
	c := h.client(t)
	c.signIn("officer")

	// The search: every shipment, then narrowed by company, licence, year and state.
	p := c.get("/console/shipments")
	p.mustContain(t, "T-CHC-1", "T-CHC-2", "T-FRL-1", "3 recorded shipments on this page")
	p = c.get("/console/shipments?company=XA-1001")
	if got := companyCellRE.FindAllStringSubmatch(p.body, -1); len(got) != 1 || got[0][1] != "XA-1001" {
		t.Errorf("company=XA-1001: companies %v", got)
	}
	p = c.get("/console/shipments?licence=XA-IMP-2026-002&year=2026&state=live")
	p.mustContain(t, "2 recorded shipments on this page")
	if p = c.get("/console/shipments?year=2025"); !strings.Contains(p.body, "No recorded shipment matches") {
		t.Errorf("year 2025 (nothing declared then): %d", p.code)
	}
	if p = c.get("/console/shipments?state=lost"); p.code != http.StatusBadRequest || !strings.Contains(p.body, "live, voided or superseded") {
		t.Errorf("state=lost: %d", p.code)
	}
	if p = c.get("/console/shipments?year=20x6"); p.code != http.StatusBadRequest || !strings.Contains(p.body, "declaration year") {
		t.Errorf("year=20x6: %d", p.code)
	}

	// Pages: 50 a page (shipmentPageSize); 51 records of an invented key series make two.
	var more []*halovetv1.ShipmentRecord
	for i := range 51 {
		more = append(more, &halovetv1.ShipmentRecord{RecordKey: fmt.Sprintf("T-PAGE-%02d", i), Direction: halovetv1.Direction_DIRECTION_IMPORT,
			CompanyId: "XA-1002", LicenceNumber: "XA-IMP-2026-002", PartnerCountry: "XC", DeclarationDate: "2026-03-02",
			Substance: "R-134a", TotalNetQuantity: "10", QuantityUnit: "kg", Purpose: halovetv1.Purpose_PURPOSE_SERVICING})
	}
	if _, err := halovetv1.NewShipmentServiceClient(h.conn).RecordShipmentBatch(h.conn.admin(), &halovetv1.RecordShipmentBatchRequest{Records: more}); err != nil {
		t.Fatal(err)
	}
	p = c.get("/console/shipments?company=XA-1002")
	p.mustContain(t, "50 recorded shipments on this page", `id="next-page"`)
	next := regexp.MustCompile(`href="(/console/shipments\?[^"]+)" id="next-page"`).FindStringSubmatch(p.body)
	if next == nil {
		t.Fatal("no link to the next page")
	}
	p2 := c.get(strings.ReplaceAll(next[1], "&amp;", "&"))
	p2.mustContain(t, "3 recorded shipments on this page", "First page") // 2 + 51 = 53 of XA-1002
	if strings.Contains(p2.body, `id="next-page"`) {
		t.Errorf("the last page links to a next one")
	}

	// One shipment: the record, the verdict as recorded, its draws.
	id := ids["T-CHC-1"]
	p = c.get(fmt.Sprintf("/console/shipments/%d", id))
	p.mustContain(t, "Verdict as recorded", `id="verdict-outcome"`, "Quota draws", "XA-IMP-2026-002", `id="shipment-state">live`, "Void the shipment")
	// 700 kg of HCFC-22 at ODP 0.055 (Montreal Protocol Annex C Group I) is 0.0385 ODP t.
	p.mustContain(t, "0.0385 ODP t")
	if p = c.get("/console/shipments/999999"); p.code != http.StatusNotFound {
		t.Errorf("unknown shipment: %d, want 404", p.code)
	}
	if p = c.get("/console/shipments/abc"); p.code != http.StatusBadRequest {
		t.Errorf("shipment abc: %d, want 400", p.code)
	}

	// Void: a reason is required, the form token too; then it is voided and its draws
	// given back.
	before := drawn(t, h, "XA-IMP-2026-002")
	got, err := halovetv1.NewShipmentServiceClient(h.conn).GetShipment(h.conn.admin(), &halovetv1.GetShipmentRequest{ShipmentId: id})
	if err != nil {
		t.Fatal(err)
	}
	var draws float64
	for _, d := range got.GetShipment().GetDraws() {
		a, err := exact.Parse(d.GetAmount())
		if err != nil {
			t.Fatalf("draw amount %q: %v", d.GetAmount(), err)
		}
		draws += a.Float64()
	}
	if draws == 0 {
		t.Fatalf("T-CHC-1 draws nothing: %v", got.GetShipment().GetDraws())
	}
	form := p
	if r := c.post(fmt.Sprintf("/console/shipments/%d/void", id), url.Values{"csrf": {form.csrf(t)}, "reason": {"  "}}); r.code != http.StatusBadRequest || !strings.Contains(r.body, "Nothing was changed") {
		t.Errorf("void without a reason: %d", r.code)
	}
	if r := c.post(fmt.Sprintf("/console/shipments/%d/void", id), url.Values{"reason": {"no token"}}); r.code != http.StatusForbidden || !strings.Contains(r.body, "Form refused") {
		t.Errorf("void without the form token: %d", r.code)
	}
	if st := shipmentState(t, h, id); st != halovetv1.ShipmentState_SHIPMENT_STATE_LIVE {
		t.Fatalf("after two refused voids the shipment is %v", st)
	}
	r := c.post(fmt.Sprintf("/console/shipments/%d/void", id), url.Values{"csrf": {form.csrf(t)}, "reason": {"declared twice (console test)"}})
	r.mustContain(t, `id="shipment-state">voided`, "declared twice (console test)", "given back")
	if strings.Contains(r.body, "Void the shipment") {
		t.Errorf("a voided shipment still offers the void form")
	}
	if st := shipmentState(t, h, id); st != halovetv1.ShipmentState_SHIPMENT_STATE_VOIDED {
		t.Errorf("after the void the shipment is %v", st)
	}
	// Its draws are given back exactly.
	if after := drawn(t, h, "XA-IMP-2026-002"); math.Abs(before-after-draws) > 1e-9 {
		t.Errorf("XA-IMP-2026-002 drawn %v before the void, %v after; want its draws (%v) given back", before, after, draws)
	}
	// Voiding it again is refused by the server with its reason.
	if r := c.post(fmt.Sprintf("/console/shipments/%d/void", id), url.Values{"csrf": {form.csrf(t)}, "reason": {"again"}}); r.code < 400 {
		t.Errorf("voiding a voided shipment: %d", r.code)
	}
	c.get("/console/shipments?state=voided").mustContain(t, "T-CHC-1", "1 recorded shipments on this page")
}

// TestShipmentsTraderOwnCompany: a trader's search and pages show its own company only, and
// that is the server's doing: the console sends the company filter as given, and the server
// answers for the credential's company or refuses.
func TestShipmentsTraderOwnCompany(t *testing.T) {
	h := newHarness(t, false)
	ids := recordSome(t, h)
	c := h.client(t)
	c.signIn("trader") // XA-1002 (testCredentials)

	p := c.get("/console/shipments")
	got := companyCellRE.FindAllStringSubmatch(p.body, -1)
	if len(got) != 2 {
		t.Errorf("the trader's search shows %d shipments; want its company's 2", len(got))
	}
	for _, m := range got {
		if m[1] != "XA-1002" {
			t.Errorf("the trader sees a shipment of %s", m[1])
		}
	}
	if strings.Contains(p.body, "T-FRL-1") {
		t.Errorf("the trader sees another company's record key")
	}
	// Another company asked for: the server refuses.
	p = c.get("/console/shipments?company=XA-1001")
	if p.code != http.StatusForbidden || !strings.Contains(p.body, "its own company only") || strings.Contains(p.body, "T-FRL-1") {
		t.Errorf("trader asking for XA-1001: %d\n%s", p.code, p.body)
	}
	// Another company's shipment opened by id: the server refuses.
	p = c.get(fmt.Sprintf("/console/shipments/%d", ids["T-FRL-1"]))
	if p.code != http.StatusForbidden || strings.Contains(p.body, "XA-IMP-2026-001") {
		t.Errorf("trader opening XA-1001's shipment: %d", p.code)
	}
	// Its own: shown, without the void form (VoidShipment is the officer's).
	p = c.get(fmt.Sprintf("/console/shipments/%d", ids["T-CHC-1"]))
	if p.code != 200 || strings.Contains(p.body, "Void the shipment") {
		t.Errorf("trader's own shipment: %d, void form shown %v", p.code, strings.Contains(p.body, "Void the shipment"))
	}
	// Posting the void anyway is refused by the role's policy, with the token, and nothing changes.
	r := c.post(fmt.Sprintf("/console/shipments/%d/void", ids["T-CHC-1"]), url.Values{"csrf": {p.csrf(t)}, "reason": {"trader tries"}})
	if r.code != http.StatusForbidden || !strings.Contains(r.body, "Not allowed for your role") {
		t.Errorf("trader's void: %d", r.code)
	}
	if st := shipmentState(t, h, ids["T-CHC-1"]); st != halovetv1.ShipmentState_SHIPMENT_STATE_LIVE {
		t.Errorf("after the trader's refused void the shipment is %v", st)
	}
}

// TestShipmentCorrect: an officer corrects a recorded shipment's quantity from its page;
// the quota moves by exactly the difference, both versions are kept, and a correction
// without a reason, without the form token, or breaking a rule changes nothing.
func TestShipmentCorrect(t *testing.T) {
	h := newHarness(t, false)
	ids := recordSome(t, h)
	c := h.client(t)
	c.signIn("officer")
	id := ids["T-CHC-2"] // 300 kg of HCFC-22 on XA-IMP-2026-002
	p := c.get(fmt.Sprintf("/console/shipments/%d", id))
	p.mustContain(t, "Correct this shipment", `name="total_net_quantity" value="300"`)
	post := func(form url.Values) page { return c.post(fmt.Sprintf("/console/shipments/%d/correct", id), form) }
	before := drawn(t, h, "XA-IMP-2026-002")

	if r := post(url.Values{"csrf": {p.csrf(t)}, "total_net_quantity": {"200"}}); r.code != http.StatusBadRequest || !strings.Contains(r.body, "Nothing was changed") {
		t.Errorf("correction without a reason: %d", r.code)
	}
	if r := post(url.Values{"total_net_quantity": {"200"}, "reason": {"no token"}}); r.code != http.StatusForbidden {
		t.Errorf("correction without the form token: %d", r.code)
	}
	if r := post(url.Values{"csrf": {p.csrf(t)}, "total_net_quantity": {"-5"}, "reason": {"breaks a rule"}}); r.code < 400 {
		t.Errorf("a correction to a negative quantity: %d; want it refused", r.code)
	}
	if st := shipmentState(t, h, id); st != halovetv1.ShipmentState_SHIPMENT_STATE_LIVE || drawn(t, h, "XA-IMP-2026-002") != before {
		t.Fatalf("after three refused corrections: state %v, drawn %v (was %v)", st, drawn(t, h, "XA-IMP-2026-002"), before)
	}

	r := post(url.Values{"csrf": {p.csrf(t)}, "total_net_quantity": {"200"}, "reason": {"weighed again (console test)"}})
	r.mustContain(t, `id="shipment-state">live`, "weighed again (console test)")
	if st := shipmentState(t, h, id); st != halovetv1.ShipmentState_SHIPMENT_STATE_SUPERSEDED {
		t.Errorf("the corrected version is %v; want superseded", st)
	}
	// 300 kg → 200 kg on a metric-tonne line: 0.1 t given back (common practice: 1 t = 1000 kg).
	if after := drawn(t, h, "XA-IMP-2026-002"); math.Abs(before-after-0.1) > 1e-9 {
		t.Errorf("drawn %v before, %v after the correction; want 0.1 t less", before, after)
	}

	// A trader is not offered the form.
	tc := h.client(t)
	tc.signIn("trader")
	if p := tc.get(fmt.Sprintf("/console/shipments/%d", ids["T-CHC-1"])); p.code != http.StatusOK || strings.Contains(p.body, "Correct this shipment") {
		t.Errorf("trader's own shipment: %d, correction form shown %v", p.code, strings.Contains(p.body, "Correct this shipment"))
	}
}
