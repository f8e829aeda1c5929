package console

import (
	"bytes"
	"fmt"
	"html/template"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"github.com/halovet/halovet/chart"
	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/internal/registryview"
	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// yearQuery is the year page's question: a control scope and a span of years.
type yearQuery struct {
	Group    string
	From, To int
}

func (q yearQuery) values() string {
	v := url.Values{"group": {q.Group}, "from": {strconv.Itoa(q.From)}, "to": {strconv.Itoa(q.To)}}
	return v.Encode()
}

// parseYearQuery reads group, from and to; the defaults are C/I and the five years to the
// current one.
func (c *Console) parseYearQuery(r *http.Request) (yearQuery, error) {
	q := r.URL.Query()
	now := c.cfg.Now().Year()
	yq := yearQuery{Group: strings.TrimSpace(q.Get("group")), From: now - 4, To: now}
	if yq.Group == "" {
		yq.Group = "C/I"
	}
	sc, err := controls.ParseScope(yq.Group)
	if err != nil {
		return yq, fmt.Errorf("group %q: give an Annex group (A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I) or F for the HFCs", yq.Group)
	}
	yq.Group = string(sc)
	for _, f := range []struct {
		name string
		dst  *int
	}{{"from", &yq.From}, {"to", &yq.To}} {
		if s := strings.TrimSpace(q.Get(f.name)); s != "" {
			y, err := strconv.Atoi(s)
			if err != nil || y < 1986 || y > 2100 {
				return yq, fmt.Errorf("%s %q: give a calendar year between 1986 and 2100", f.name, s)
			}
			*f.dst = y
		}
	}
	if yq.To < yq.From {
		return yq, fmt.Errorf("to %d is before from %d: give the first year in from and the last in to", yq.To, yq.From)
	}
	if yq.To-yq.From > 60 {
		return yq, fmt.Errorf("from %d to %d: at most 60 years at once", yq.From, yq.To)
	}
	return yq, nil
}

const (
	rpcYearReport  = "/halovet.v1.ConsumptionService/GetYearReport"
	rpcClosedYears = "/halovet.v1.ShipmentService/ListClosedYears"
)

type yearData struct {
	Q           yearQuery
	Closed      *halovetv1.ClosedYear // the last year asked for, when it is closed
	StateKnown  bool                  // false when the role may not read the closed years
	CanReport   bool
	ReportLink  template.URL // the page with the report shown
	Report      *halovetv1.GetYearReportResponse
	ReportJSON  template.URL
	Scopes      []scopeChoice
	Party       string
	Consumption *halovetv1.GetConsumptionResponse
	Baseline    *halovetv1.GetBaselineResponse
	Assessment  *halovetv1.AssessComplianceResponse
	ChartSVG    template.URL // built here from the parsed query, its values encoded
	ChartPNG    template.URL
	ChartAlt    string
	Current     int
}

type scopeChoice struct{ Value, Label string }

func scopeChoices() []scopeChoice {
	var out []scopeChoice
	for _, s := range controls.AllScopes {
		out = append(out, scopeChoice{string(s), string(s) + " — " + s.FullName()})
	}
	return out
}

// year shows the consumption of the last year asked for, the group's baseline and the
// compliance of each year, with the chart.
func (c *Console) year(w http.ResponseWriter, r *http.Request, rq *request) {
	yq, err := c.parseYearQuery(r)
	if err != nil {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", err.Error())
		return
	}
	ctx := c.ctx(r, rq, rpcAssess)
	cons := c.consumptionClient()
	d := yearData{Q: yq, Scopes: scopeChoices(), ChartSVG: template.URL("/console/year/chart.svg?" + yq.values()), ChartPNG: template.URL("/console/year/chart.png?" + yq.values()), Current: c.cfg.Now().Year()}
	if d.Assessment, err = cons.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: yq.Group, FromYear: int32(yq.From), ToYear: int32(yq.To)}); err != nil {
		c.callFailed(w, r, rq, "assessing compliance", err)
		return
	}
	if d.Consumption, err = cons.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: int32(yq.To)}); err != nil {
		c.callFailed(w, r, rq, "reading consumption", err)
		return
	}
	if d.Baseline, err = cons.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: yq.Group}); err != nil {
		c.callFailed(w, r, rq, "reading the baseline", err)
		return
	}
	if d.Party, err = c.partyName(r, rq); err != nil {
		c.callFailed(w, r, rq, "reading the reporting Party", err)
		return
	}
	if c.allowed(rq, rpcClosedYears) {
		cl, err := halovetv1.ReadAllPages(c.ctx(r, rq, rpcClosedYears), c.shipmentClient().ListClosedYears,
			&halovetv1.ListClosedYearsRequest{PageSize: readAllPageSize}, "closed_years")
		if err != nil {
			c.callFailed(w, r, rq, "reading the closed years", err)
			return
		}
		d.StateKnown = true
		for _, y := range cl.GetClosedYears() {
			if int(y.GetYear()) == yq.To {
				d.Closed = y
			}
		}
	}
	if d.CanReport = c.allowed(rq, rpcYearReport); d.CanReport {
		d.ReportLink = template.URL("/console/year?" + yq.values() + "&report=1#report-heading")
		d.ReportJSON = template.URL("/console/year/report.json?" + url.Values{"year": {strconv.Itoa(yq.To)}}.Encode())
		if r.URL.Query().Get("report") == "1" {
			if d.Report, err = cons.GetYearReport(c.ctx(r, rq, rpcYearReport), &halovetv1.GetYearReportRequest{Year: int32(yq.To)}); err != nil {
				c.callFailed(w, r, rq, fmt.Sprintf("computing the annual data report of %d", yq.To), err)
				return
			}
		}
	}
	cc := chart.FromAssessment(d.Assessment, d.Party, d.Current)
	d.ChartAlt = chartAlt(cc)
	c.render(w, r, rq.s, http.StatusOK, "year", "The year", d)
}

// chartAlt describes the chart in words for those who cannot see it; the table beside it
// gives every figure.
func chartAlt(c chart.Compliance) string {
	var exceeded, nodata []string
	for _, y := range c.Years {
		if y.Exceeded {
			exceeded = append(exceeded, fmt.Sprintf("%d (by %s %s)", y.Year, figure(y.Excess()), c.Unit))
		}
		if !y.HasData {
			nodata = append(nodata, strconv.Itoa(y.Year))
		}
	}
	s := "Chart: " + c.Title() + "."
	if len(exceeded) > 0 {
		s += " Exceeded in " + strings.Join(exceeded, ", ") + "."
	} else {
		s += " No year exceeded the allowed level."
	}
	if len(nodata) > 0 {
		s += " No data for " + strings.Join(nodata, ", ") + "."
	}
	return s + " The table below gives every figure."
}

// partyName is the reporting Party's name, for the chart's title; "" when none is set.
func (c *Console) partyName(r *http.Request, rq *request) (string, error) {
	return registryview.ReportingPartyName(c.ctx(r, rq, rpcAssess), c.licensingClient(), readAllPageSize)
}

func (c *Console) yearChart(w http.ResponseWriter, r *http.Request, rq *request, asPNG bool) {
	yq, err := c.parseYearQuery(r)
	if err != nil {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", err.Error())
		return
	}
	resp, err := c.consumptionClient().AssessCompliance(c.ctx(r, rq, rpcAssess), &halovetv1.AssessComplianceRequest{AnnexGroup: yq.Group, FromYear: int32(yq.From), ToYear: int32(yq.To)})
	if err != nil {
		c.callFailed(w, r, rq, "assessing compliance", err)
		return
	}
	party, err := c.partyName(r, rq)
	if err != nil {
		c.callFailed(w, r, rq, "reading the reporting Party", err)
		return
	}
	cc := chart.FromAssessment(resp, party, c.cfg.Now().Year())
	var b bytes.Buffer
	name := fmt.Sprintf("compliance-%s-%d-%d", strings.ReplaceAll(strings.ToLower(yq.Group), "/", ""), yq.From, yq.To)
	if asPNG {
		err = chart.PNG(&b, cc)
		w.Header().Set("Content-Type", "image/png")
		w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", name+".png"))
	} else {
		err = chart.SVG(&b, cc)
		w.Header().Set("Content-Type", "image/svg+xml")
	}
	if err != nil {
		c.fail(w, r, rq.s, http.StatusInternalServerError, "The chart could not be drawn", err.Error())
		return
	}
	_, _ = w.Write(b.Bytes())
}

// yearReportJSON downloads the annual data report of a year in the project's JSON dialect
// (package wirejson): the same bytes as 'halovet year-report --output json' and the
// report.json of 'halovet year-report --dir'. The report holds no time of computation, so
// the same register gives the same bytes.
func (c *Console) yearReportJSON(w http.ResponseWriter, r *http.Request, rq *request) {
	raw := strings.TrimSpace(r.URL.Query().Get("year"))
	y, err := strconv.Atoi(raw)
	if err != nil || y < 1986 || y > 2100 {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Not accepted", fmt.Sprintf("year %q: give a calendar year between 1986 and 2100", raw))
		return
	}
	rep, err := c.consumptionClient().GetYearReport(c.ctx(r, rq, rpcYearReport), &halovetv1.GetYearReportRequest{Year: int32(y)})
	if err != nil {
		c.callFailed(w, r, rq, fmt.Sprintf("computing the annual data report of %d", y), err)
		return
	}
	var b bytes.Buffer
	if err := wirejson.Doc(&b, rep); err != nil {
		c.fail(w, r, rq.s, http.StatusInternalServerError, "The report could not be written", err.Error())
		return
	}
	w.Header().Set("Content-Type", "application/json")
	w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", fmt.Sprintf("year-report-%d.json", y)))
	_, _ = w.Write(b.Bytes())
}

func (c *Console) yearChartSVG(w http.ResponseWriter, r *http.Request, rq *request) {
	c.yearChart(w, r, rq, false)
}
func (c *Console) yearChartPNG(w http.ResponseWriter, r *http.Request, rq *request) {
	c.yearChart(w, r, rq, true)
}

// outcomeClass is outcomeWord as a CSS class name.
func outcomeClass(o halovetv1.ComplianceOutcome) string {
	return strings.ReplaceAll(outcomeWord(o), " ", "-")
}

func outcomeWord(o halovetv1.ComplianceOutcome) string {
	switch o {
	case halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN:
		return "within"
	case halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED:
		return "exceeded"
	}
	return "not assessed"
}

// reportTable is one titled table of a year report's lines.
type reportTable[L any] struct {
	Title string
	Lines []L
}

func reportTrade(r *halovetv1.GetYearReportResponse) []reportTable[*halovetv1.YearTradeLine] {
	return []reportTable[*halovetv1.YearTradeLine]{
		{"Imports by exporting country", r.GetImports()}, {"Exports by destination", r.GetExports()},
		{"Imports from non-Parties", r.GetImportsNonParty()}, {"Exports to non-Parties", r.GetExportsNonParty()},
	}
}

func reportQuantities(r *halovetv1.GetYearReportResponse) []reportTable[*halovetv1.YearQuantityLine] {
	return []reportTable[*halovetv1.YearQuantityLine]{
		{"Production", r.GetProduction()}, {"Destruction", r.GetDestruction()}, {"Feedstock use", r.GetFeedstock()}, {"QPS use of methyl bromide", r.GetQps()},
	}
}

func exemptedUseWord(u halovetv1.ExemptedUse) string {
	return strings.ToLower(strings.ReplaceAll(strings.TrimPrefix(u.String(), "EXEMPTED_USE_"), "_", " "))
}
