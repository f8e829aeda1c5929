package console

import (
	"fmt"
	"html/template"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/terms"
)

type licencesData struct {
	Company      string
	Year         string
	OwnCompany   string // set for a trader: the list is limited to it
	Licences     []*halovetv1.Licence
	CanOpen      bool
	CompanyFixed bool
	Next         template.URL // the next page; empty on the last
	First        template.URL // the first page, when this is a later one
}

// licencePageSize is how many licences one page of the register shows.
const licencePageSize = 50

// readAllPageSize is the page size of the lists the console reads whole (a licence's
// history, the Parties, the closed years): the largest the API takes.
const readAllPageSize = 1000

// query is the register's address with the given page token, its values encoded.
func (d licencesData) query(page string) template.URL {
	v := url.Values{}
	for k, s := range map[string]string{"company": d.Company, "year": d.Year, "page": page} {
		if s != "" && !(k == "company" && d.CompanyFixed) {
			v.Set(k, s)
		}
	}
	return template.URL("/console/licences?" + v.Encode())
}

// licences lists the register. A trader's credential sees its own company only, whatever
// the filter says.
func (c *Console) licences(w http.ResponseWriter, r *http.Request, rq *request) {
	q := r.URL.Query()
	d := licencesData{Company: strings.TrimSpace(q.Get("company")), Year: strings.TrimSpace(q.Get("year")), CanOpen: c.allowed(rq, rpcGetLicence)}
	if own := rq.id().Company; own != "" {
		d.Company, d.OwnCompany, d.CompanyFixed = own, own, true
	}
	req := &halovetv1.ListLicencesRequest{CompanyId: d.Company, PageSize: licencePageSize, PageToken: q.Get("page")}
	if d.Year != "" {
		y, err := strconv.Atoi(d.Year)
		if err != nil || y < 1987 || y > 2200 {
			c.fail(w, r, rq.s, http.StatusBadRequest, "Year not accepted", fmt.Sprintf("year %q: give a calendar year such as 2026, or leave it empty for every year.", d.Year))
			return
		}
		req.Year = int32(y)
	}
	resp, err := c.licensingClient().ListLicences(c.ctx(r, rq, rpcListLicences), req)
	if err != nil {
		c.callFailed(w, r, rq, "listing licences", err)
		return
	}
	for _, l := range resp.GetLicences() {
		if d.OwnCompany != "" && l.GetCompanyId() != d.OwnCompany {
			continue // the server's answer is filtered already; this keeps it so whatever it says
		}
		d.Licences = append(d.Licences, l)
	}
	if tok := resp.GetNextPageToken(); tok != "" {
		d.Next = d.query(tok)
	}
	if q.Get("page") != "" {
		d.First = d.query("")
	}
	c.render(w, r, rq.s, http.StatusOK, "licences", "Licence register", d)
}

const rpcLicenceHistory = "/halovet.v1.LicensingService/ListLicenceHistory"

type licenceData struct {
	L            *halovetv1.Licence
	History      *halovetv1.ListLicenceHistoryResponse // nil when the role may not read it
	CanShipments bool                                  // the role may search the recorded shipments
	CanAmend     bool
	CanSetStatus bool
	Statuses     []statusChoice
}

type statusChoice struct {
	Value, Label string
}

// licence shows one licence and, where the role may, the forms to suspend or reinstate it.
func (c *Console) licence(w http.ResponseWriter, r *http.Request, rq *request) {
	l, ok := c.readLicence(w, r, rq, r.PathValue("number"))
	if !ok {
		return
	}
	d := licenceData{L: l, CanSetStatus: c.allowed(rq, rpcSetStatus), CanAmend: c.allowed(rq, rpcAmend), CanShipments: c.allowed(rq, rpcListShipments)}
	if c.allowed(rq, rpcLicenceHistory) {
		h, err := halovetv1.ReadAllPages(c.ctx(r, rq, rpcLicenceHistory), c.licensingClient().ListLicenceHistory,
			&halovetv1.ListLicenceHistoryRequest{LicenceNumber: l.GetLicenceNumber(), PageSize: readAllPageSize}, "events")
		if err != nil {
			c.callFailed(w, r, rq, "reading the history of licence "+l.GetLicenceNumber(), err)
			return
		}
		d.History = h
	}
	switch l.GetStatus() {
	case halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE:
		d.Statuses = []statusChoice{{"suspended", "Suspend"}}
	case halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED:
		d.Statuses = []statusChoice{{"active", "Reinstate"}}
	}
	c.render(w, r, rq.s, http.StatusOK, "licence", "Licence "+l.GetLicenceNumber(), d)
}

// readLicence reads a licence the identity may see; a trader asking for another company's
// licence is told there is none (the same answer as for a licence that does not exist).
func (c *Console) readLicence(w http.ResponseWriter, r *http.Request, rq *request, number string) (*halovetv1.Licence, bool) {
	resp, err := c.licensingClient().GetLicence(c.ctx(r, rq, rpcGetLicence), &halovetv1.GetLicenceRequest{LicenceNumber: number})
	if err != nil {
		c.callFailed(w, r, rq, "reading licence "+number, err)
		return nil, false
	}
	l := resp.GetLicence()
	if own := rq.id().Company; own != "" && l.GetCompanyId() != own {
		c.fail(w, r, rq.s, http.StatusNotFound, "Not found", "reading licence "+number+": no licence of your company has that number.")
		return nil, false
	}
	return l, true
}

// consoleStatus reads the status a console form asks for: the console sets active
// (reinstate) or suspended, nothing else.
func consoleStatus(s string) (halovetv1.LicenceStatus, bool) {
	st, err := terms.ParseLicenceStatus(s)
	if err != nil || s != st.String() || (st != terms.LicenceActive && st != terms.LicenceSuspended) {
		return halovetv1.LicenceStatus_LICENCE_STATUS_UNSPECIFIED, false
	}
	return wireterms.LicenceStatusToWire(st), true
}

// setLicenceStatus suspends or reinstates a licence, with the reason the form gives.
func (c *Console) setLicenceStatus(w http.ResponseWriter, r *http.Request, rq *request) {
	number := r.PathValue("number")
	st, ok := consoleStatus(r.PostFormValue("status"))
	if !ok {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", fmt.Sprintf("status %q: the console sets active (reinstate) or suspended. Nothing was changed.", r.PostFormValue("status")))
		return
	}
	reason := strings.TrimSpace(r.PostFormValue("reason"))
	if reason == "" {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", "reason: say why the status changes (it goes into the audit log). Nothing was changed.")
		return
	}
	if _, ok := c.readLicence(w, r, rq, number); !ok {
		return
	}
	if _, err := c.licensingClient().SetLicenceStatus(c.ctx(r, rq, rpcSetStatus), &halovetv1.SetLicenceStatusRequest{
		LicenceNumber: number, Status: st, Reason: reason + " (console, " + rq.id().Name + ")"}); err != nil {
		c.callFailed(w, r, rq, "changing the status of licence "+number, err)
		return
	}
	http.Redirect(w, r, "/console/licences/"+number, http.StatusSeeOther)
}

// Helpers for the templates.

func statusWord(s halovetv1.LicenceStatus) string {
	return strings.ToLower(strings.TrimPrefix(s.String(), "LICENCE_STATUS_"))
}

func eventKindWord(k halovetv1.LicenceEventKind) string {
	return strings.ToLower(strings.ReplaceAll(strings.TrimPrefix(k.String(), "LICENCE_EVENT_KIND_"), "_", " "))
}

func unitWord(u halovetv1.QuotaUnit) string {
	if d, ok := wireterms.QuotaUnitFromWire(u); ok && d != terms.QuotaUnitUnspecified {
		return d.Symbol()
	}
	return "?"
}

func enumWords[E interface{ String() string }](prefix string, es []E) string {
	out := make([]string, len(es))
	for i, e := range es {
		out[i] = strings.ToLower(strings.ReplaceAll(strings.TrimPrefix(e.String(), prefix), "_", " "))
	}
	return strings.Join(out, ", ")
}

func directionWords(ds []halovetv1.Direction) string { return enumWords("DIRECTION_", ds) }
func purposeWords(ps []halovetv1.Purpose) string     { return enumWords("PURPOSE_", ps) }

// amendQuota changes the allocation of one quota line (AmendLicence: the server refuses an
// allocation below what is drawn already), with the reason the form gives.
func (c *Console) amendQuota(w http.ResponseWriter, r *http.Request, rq *request) {
	number := r.PathValue("number")
	line, err := strconv.Atoi(r.PostFormValue("line"))
	if err != nil {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", fmt.Sprintf("line %q: give the quota line's number. Nothing was changed.", r.PostFormValue("line")))
		return
	}
	// A plain decimal: a comma is refused rather than guessed (a decimal comma "4,25" and a
	// thousands separator "1,500" read alike).
	alloc, err := exact.Parse(strings.TrimSpace(r.PostFormValue("allocated")))
	if err != nil || alloc.Sign() < 0 {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", fmt.Sprintf("allocated %q: give the new allocation in the line's unit as a decimal 0 or more with a point and no separators (for example 4.25 or 1500). Nothing was changed.", r.PostFormValue("allocated")))
		return
	}
	reason := strings.TrimSpace(r.PostFormValue("reason"))
	if reason == "" {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", "reason: say why the allocation changes (it goes into the audit log). Nothing was changed.")
		return
	}
	l, ok := c.readLicence(w, r, rq, number)
	if !ok {
		return
	}
	found := false
	for _, q := range l.GetQuotaLines() {
		if int(q.GetLineNumber()) == line {
			q.AllocatedAmount, found = alloc.String(), true
		}
	}
	if !found {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", fmt.Sprintf("line %d: licence %s has no such quota line. Nothing was changed.", line, number))
		return
	}
	if _, err := c.licensingClient().AmendLicence(c.ctx(r, rq, rpcAmend), &halovetv1.AmendLicenceRequest{
		Licence: l, Reason: reason + " (console, " + rq.id().Name + ")"}); err != nil {
		c.callFailed(w, r, rq, "amending licence "+number, err)
		return
	}
	http.Redirect(w, r, "/console/licences/"+number, http.StatusSeeOther)
}
