package console

import (
	"fmt"
	"html/template"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

const (
	rpcListShipments = "/halovet.v1.ShipmentService/ListShipments"
	rpcGetShipment   = "/halovet.v1.ShipmentService/GetShipment"
	rpcVoidShipment  = "/halovet.v1.ShipmentService/VoidShipment"
	rpcCorrect       = "/halovet.v1.ShipmentService/CorrectShipment"
)

// shipmentPageSize is how many recorded shipments one page of the search shows.
const shipmentPageSize = 50

var shipmentStates = map[string]halovetv1.ShipmentState{
	"live":       halovetv1.ShipmentState_SHIPMENT_STATE_LIVE,
	"voided":     halovetv1.ShipmentState_SHIPMENT_STATE_VOIDED,
	"superseded": halovetv1.ShipmentState_SHIPMENT_STATE_SUPERSEDED,
}

type shipmentsData struct {
	Company, Licence, Year, State string
	OwnCompany                    string // a trader's company: the server answers for it only
	States                        []string
	Shipments                     []*halovetv1.RecordedShipment
	Next                          template.URL // the next page; empty on the last
	First                         template.URL // the first page, when this is a later one
	CanOpen                       bool
}

// query is the search's address with the given page token, its values encoded.
func (d shipmentsData) query(page string) template.URL {
	v := url.Values{}
	for k, s := range map[string]string{"company": d.Company, "licence": d.Licence, "year": d.Year, "state": d.State, "page": page} {
		if s != "" {
			v.Set(k, s)
		}
	}
	return template.URL("/console/shipments?" + v.Encode())
}

// shipments searches the recorded shipments by company, licence, year and state, a page
// at a time. The filters go to the server as given: a trader's credential is limited to
// its own company there (an empty company means its own; another company is refused).
func (c *Console) shipments(w http.ResponseWriter, r *http.Request, rq *request) {
	q := r.URL.Query()
	d := shipmentsData{Company: strings.TrimSpace(q.Get("company")), Licence: strings.TrimSpace(q.Get("licence")),
		Year: strings.TrimSpace(q.Get("year")), State: strings.TrimSpace(q.Get("state")),
		OwnCompany: rq.id().Company, States: []string{"live", "voided", "superseded"}, CanOpen: c.allowed(rq, rpcGetShipment)}
	req := &halovetv1.ListShipmentsRequest{CompanyId: d.Company, LicenceNumber: d.Licence, PageSize: shipmentPageSize, PageToken: q.Get("page")}
	if d.Year != "" {
		y, err := strconv.Atoi(d.Year)
		if err != nil || y < 1986 || y > 2200 {
			c.fail(w, r, rq.s, http.StatusBadRequest, "Year not accepted", fmt.Sprintf("year %q: give a declaration year such as 2026, or leave it empty for every year.", d.Year))
			return
		}
		req.Year = int32(y)
	}
	if d.State != "" {
		st, ok := shipmentStates[d.State]
		if !ok {
			c.fail(w, r, rq.s, http.StatusBadRequest, "State not accepted", fmt.Sprintf("state %q: give live, voided or superseded, or leave it empty for every state.", d.State))
			return
		}
		req.States = []halovetv1.ShipmentState{st}
	}
	resp, err := c.shipmentClient().ListShipments(c.ctx(r, rq, rpcListShipments), req)
	if err != nil {
		c.callFailed(w, r, rq, "searching the recorded shipments", err)
		return
	}
	d.Shipments = resp.GetShipments()
	if tok := resp.GetNextPageToken(); tok != "" {
		d.Next = d.query(tok)
	}
	if q.Get("page") != "" {
		d.First = d.query("")
	}
	c.render(w, r, rq.s, http.StatusOK, "shipments", "Recorded shipments", d)
}

type shipmentData struct {
	S          *halovetv1.RecordedShipment
	Versions   []*halovetv1.RecordedShipment
	CanVoid    bool
	CanCorrect bool
}

// shipment shows one recorded shipment: the record, the verdict it was recorded with, its
// quota draws and every version of its company and key; the void form where the role may.
func (c *Console) shipment(w http.ResponseWriter, r *http.Request, rq *request) {
	id, ok := c.shipmentID(w, r, rq)
	if !ok {
		return
	}
	resp, err := c.shipmentClient().GetShipment(c.ctx(r, rq, rpcGetShipment), &halovetv1.GetShipmentRequest{ShipmentId: id})
	if err != nil {
		c.callFailed(w, r, rq, fmt.Sprintf("reading recorded shipment %d", id), err)
		return
	}
	live := resp.GetShipment().GetState() == halovetv1.ShipmentState_SHIPMENT_STATE_LIVE
	d := shipmentData{S: resp.GetShipment(), Versions: resp.GetVersions(),
		CanVoid: c.allowed(rq, rpcVoidShipment) && live, CanCorrect: c.allowed(rq, rpcCorrect) && live}
	c.render(w, r, rq.s, http.StatusOK, "shipment", fmt.Sprintf("Recorded shipment %d", id), d)
}

func (c *Console) shipmentID(w http.ResponseWriter, r *http.Request, rq *request) (int64, bool) {
	raw := r.PathValue("id")
	id, err := strconv.ParseInt(raw, 10, 64)
	if err != nil || id <= 0 {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", fmt.Sprintf("shipment %q: give the register's id of a recorded shipment, a whole number from 1 (the search lists them).%s", raw, nothingChanged(r.Method == http.MethodPost)))
		return 0, false
	}
	return id, true
}

// shipmentAndReason reads the shipment id of the path and the form's reason, which a
// change must give; it answers the request itself and says false when either is missing.
// done is what the change does to the shipment ("voided", "corrected").
func (c *Console) shipmentAndReason(w http.ResponseWriter, r *http.Request, rq *request, done string) (int64, string, bool) {
	id, ok := c.shipmentID(w, r, rq)
	if !ok {
		return 0, "", false
	}
	reason := strings.TrimSpace(r.PostFormValue("reason"))
	if reason == "" {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", "reason: say why the shipment is "+done+" (it is kept in the register and the audit log). Nothing was changed.")
		return 0, "", false
	}
	return id, reason, true
}

// voidShipment voids a live recorded shipment with the reason the form gives: its quota
// draws are given back and it leaves consumption (VoidShipment).
func (c *Console) voidShipment(w http.ResponseWriter, r *http.Request, rq *request) {
	id, reason, ok := c.shipmentAndReason(w, r, rq, "voided")
	if !ok {
		return
	}
	if _, err := c.shipmentClient().VoidShipment(c.ctx(r, rq, rpcVoidShipment), &halovetv1.VoidShipmentRequest{
		ShipmentId: id, Reason: reason + " (console, " + rq.id().Name + ")"}); err != nil {
		c.callFailed(w, r, rq, fmt.Sprintf("voiding recorded shipment %d", id), err)
		return
	}
	http.Redirect(w, r, fmt.Sprintf("/console/shipments/%d", id), http.StatusSeeOther)
}

// correctShipment replaces a live recorded shipment by a new version with the quantity,
// unit, declaration date, licence and partner the form gives (CorrectShipment): checked like
// a new record, its quota moved exactly in one transaction, both versions kept. A correction
// that breaks a rule is refused with the server's reason and nothing changes.
func (c *Console) correctShipment(w http.ResponseWriter, r *http.Request, rq *request) {
	id, reason, ok := c.shipmentAndReason(w, r, rq, "corrected")
	if !ok {
		return
	}
	got, err := c.shipmentClient().GetShipment(c.ctx(r, rq, rpcGetShipment), &halovetv1.GetShipmentRequest{ShipmentId: id})
	if err != nil {
		c.callFailed(w, r, rq, fmt.Sprintf("reading recorded shipment %d", id), err)
		return
	}
	rec := proto.Clone(got.GetShipment().GetRecord()).(*halovetv1.ShipmentRecord)
	for field, set := range map[string]*string{"total_net_quantity": &rec.TotalNetQuantity, "quantity_unit": &rec.QuantityUnit,
		"declaration_date": &rec.DeclarationDate, "licence_number": &rec.LicenceNumber, "partner_country": &rec.PartnerCountry} {
		if v, given := r.PostForm[field]; given {
			*set = strings.TrimSpace(v[0])
		}
	}
	resp, err := c.shipmentClient().CorrectShipment(c.ctx(r, rq, rpcCorrect), &halovetv1.CorrectShipmentRequest{
		ShipmentId: id, Record: rec, Reason: reason + " (console, " + rq.id().Name + ")"})
	if err != nil {
		c.callFailed(w, r, rq, fmt.Sprintf("correcting recorded shipment %d", id), err)
		return
	}
	http.Redirect(w, r, fmt.Sprintf("/console/shipments/%d", resp.GetShipment().GetShipmentId()), http.StatusSeeOther)
}

// Helpers for the templates.

func shipmentStateWord(s halovetv1.ShipmentState) string {
	if s == halovetv1.ShipmentState_SHIPMENT_STATE_UNSPECIFIED {
		return "not recorded"
	}
	return strings.ToLower(strings.TrimPrefix(s.String(), "SHIPMENT_STATE_"))
}

func verdictWord(o halovetv1.Outcome) string {
	switch o {
	case halovetv1.Outcome_OUTCOME_ACCEPTED:
		return "accepted"
	case halovetv1.Outcome_OUTCOME_ACCEPTED_WITH_WARNINGS:
		return "accepted with warnings"
	case halovetv1.Outcome_OUTCOME_REJECTED:
		return "rejected"
	}
	return "not given"
}

func severityWord(s halovetv1.Severity) string {
	return strings.ToLower(strings.TrimPrefix(s.String(), "SEVERITY_"))
}

// stamp prints an RFC 3339 time as "YYYY-MM-DD hh:mm:ss" (UTC, as the server gives it).
func stamp(s string) string {
	if len(s) >= 19 {
		return s[:10] + " " + s[11:19]
	}
	return s
}
