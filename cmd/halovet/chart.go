package main

import (
	"bytes"
	"encoding/xml"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// The compliance chart: consumption (points joined by a line) against the allowed level (a
// step line) per year, as a self-contained SVG written by hand (no dependency, no script,
// no external reference). Every year gets one point: a filled circle at its consumption,
// or a hollow one on the zero line marked "no data". The allowed level is drawn for the
// years that have one and broken where a year has none (no baseline, no rule).

// Chart geometry in SVG user units.
const (
	chartWidth  = 760.0
	chartHeight = 420.0
	chartLeft   = 90.0 // room for the y-axis labels
	chartRight  = 20.0
	chartTop    = 50.0
	chartBottom = 80.0 // room for the year labels, the axis title and the legend
)

// chartYear is one year's figures as the chart reads them.
type chartYear struct {
	year        int
	consumption float64
	hasData     bool
	allowed     float64
	hasAllowed  bool
}

func chartYears(resp *halovetv1.AssessComplianceResponse) []chartYear {
	var out []chartYear
	for _, y := range resp.GetYears() {
		cy := chartYear{year: int(y.GetYear()), consumption: y.GetConsumption(), hasData: y.GetHasData(), allowed: y.GetAllowed()}
		// The allowed level is known when the year was assessed (a period-average year shows
		// the period's mean level), and in a year without data when a step is in force and
		// either the baseline is complete or the step is 0 % (which needs no baseline).
		o := y.GetOutcome()
		cy.hasAllowed = o == halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN ||
			o == halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED ||
			(hasStepNote(y) && (y.GetAllowedPercent() == 0 || resp.GetBaselineComplete()))
		out = append(out, cy)
	}
	return out
}

// hasStepNote tells a year with a control step in force from one before the first
// control measure: the assessment notes the step in force (controls.Rulebook.Assess).
func hasStepNote(y *halovetv1.ComplianceYear) bool {
	for _, n := range y.GetNotes() {
		if strings.HasPrefix(n, "step in force") {
			return true
		}
	}
	return false
}

// niceStep rounds a raw tick step up to 1, 2 or 5 times a power of ten.
func niceStep(raw float64) float64 {
	if raw <= 0 || math.IsNaN(raw) || math.IsInf(raw, 0) {
		return 1
	}
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 5, 10} {
		if m*p >= raw {
			return m * p
		}
	}
	return 10 * p
}

// fmtTick prints an axis value with as many decimals as the step needs.
func fmtTick(v, step float64) string {
	d := 0
	if step < 1 {
		d = int(math.Ceil(-math.Log10(step)))
	}
	return fmtFixed(v, d)
}

func svgNum(v float64) string { return strconv.FormatFloat(v, 'f', 2, 64) }

func svgText(s string) string {
	var b bytes.Buffer
	_ = xml.EscapeText(&b, []byte(s))
	return b.String()
}

// writeChart draws the chart of a compliance response.
func writeChart(w io.Writer, resp *halovetv1.AssessComplianceResponse) error {
	ys := chartYears(resp)
	unit := resp.GetUnit()
	lo, hi := 0.0, 0.0
	for _, y := range ys {
		if y.hasData {
			lo, hi = math.Min(lo, y.consumption), math.Max(hi, y.consumption)
		}
		if y.hasAllowed {
			lo, hi = math.Min(lo, y.allowed), math.Max(hi, y.allowed)
		}
	}
	if hi == lo {
		hi = lo + 1
	}
	step := niceStep((hi - lo) / 5)
	lo = math.Floor(lo/step) * step
	hi = math.Ceil(hi/step) * step
	if hi == lo {
		hi = lo + step
	}
	plotW := chartWidth - chartLeft - chartRight
	plotH := chartHeight - chartTop - chartBottom
	n := len(ys)
	band := plotW / float64(max(n, 1))
	xOf := func(i int) float64 { return chartLeft + (float64(i)+0.5)*band }
	yOf := func(v float64) float64 { return chartTop + (hi-v)/(hi-lo)*plotH }

	var b strings.Builder
	fmt.Fprintf(&b, `<?xml version="1.0" encoding="UTF-8"?>
<svg xmlns="http://www.w3.org/2000/svg" width="%s" height="%s" viewBox="0 0 %s %s" font-family="sans-serif" font-size="12">
`, svgNum(chartWidth), svgNum(chartHeight), svgNum(chartWidth), svgNum(chartHeight))
	title := fmt.Sprintf("%s consumption against the allowed level (%s schedule)", resp.GetAnnexGroup(), resp.GetAppliesTo())
	fmt.Fprintf(&b, "  <title>%s</title>\n", svgText(title))
	fmt.Fprintf(&b, "  <rect x=\"0\" y=\"0\" width=\"%s\" height=\"%s\" fill=\"white\"/>\n", svgNum(chartWidth), svgNum(chartHeight))
	fmt.Fprintf(&b, "  <text class=\"title\" x=\"%s\" y=\"24\" text-anchor=\"middle\" font-size=\"15\">%s</text>\n", svgNum(chartWidth/2), svgText(title))

	// Grid and y-axis ticks.
	b.WriteString("  <g class=\"y-axis\" stroke=\"#ddd\">\n")
	for v := lo; v <= hi+step/2; v += step {
		y := yOf(v)
		fmt.Fprintf(&b, "    <line x1=\"%s\" y1=\"%s\" x2=\"%s\" y2=\"%s\"/>\n", svgNum(chartLeft), svgNum(y), svgNum(chartWidth-chartRight), svgNum(y))
		fmt.Fprintf(&b, "    <text x=\"%s\" y=\"%s\" text-anchor=\"end\" stroke=\"none\" fill=\"#333\">%s</text>\n",
			svgNum(chartLeft-6), svgNum(y+4), svgText(fmtTick(v, step)))
	}
	b.WriteString("  </g>\n")
	// Axes: the y axis on the left, the x axis on the zero line.
	fmt.Fprintf(&b, "  <line class=\"axis\" x1=\"%s\" y1=\"%s\" x2=\"%s\" y2=\"%s\" stroke=\"#333\"/>\n",
		svgNum(chartLeft), svgNum(chartTop), svgNum(chartLeft), svgNum(chartTop+plotH))
	fmt.Fprintf(&b, "  <line class=\"axis\" x1=\"%s\" y1=\"%s\" x2=\"%s\" y2=\"%s\" stroke=\"#333\"/>\n",
		svgNum(chartLeft), svgNum(yOf(0)), svgNum(chartWidth-chartRight), svgNum(yOf(0)))
	fmt.Fprintf(&b, "  <text class=\"axis-label\" transform=\"translate(18 %s) rotate(-90)\" text-anchor=\"middle\">%s</text>\n",
		svgNum(chartTop+plotH/2), svgText("consumption and allowed level, "+unit))
	// Year labels: all of them when they fit, else every k-th.
	every := 1
	for float64(every)*band < 34 {
		every++
	}
	b.WriteString("  <g class=\"x-axis\" text-anchor=\"middle\" fill=\"#333\">\n")
	for i, y := range ys {
		if i%every == 0 || i == n-1 {
			fmt.Fprintf(&b, "    <text x=\"%s\" y=\"%s\">%d</text>\n", svgNum(xOf(i)), svgNum(chartTop+plotH+18), y.year)
		}
	}
	b.WriteString("  </g>\n")
	fmt.Fprintf(&b, "  <text class=\"axis-label\" x=\"%s\" y=\"%s\" text-anchor=\"middle\">year</text>\n",
		svgNum(chartLeft+plotW/2), svgNum(chartTop+plotH+36))

	// Allowed level: a step line over each year's band, broken where a year has none.
	var path strings.Builder
	prev := false
	for i, y := range ys {
		if !y.hasAllowed {
			prev = false
			continue
		}
		x0, x1, yy := chartLeft+float64(i)*band, chartLeft+float64(i+1)*band, yOf(y.allowed)
		if prev {
			fmt.Fprintf(&path, " V %s H %s", svgNum(yy), svgNum(x1))
		} else {
			fmt.Fprintf(&path, " M %s %s H %s", svgNum(x0), svgNum(yy), svgNum(x1))
		}
		prev = true
	}
	if path.Len() > 0 {
		fmt.Fprintf(&b, "  <path class=\"allowed\" d=\"%s\" fill=\"none\" stroke=\"#c0392b\" stroke-width=\"2.5\"/>\n", strings.TrimSpace(path.String()))
	}

	// Consumption: lines through runs of consecutive years with data (a year without data
	// breaks the line rather than being bridged), and one point per year.
	var pts []string
	flush := func() {
		if len(pts) > 1 {
			fmt.Fprintf(&b, "  <polyline class=\"consumption\" points=\"%s\" fill=\"none\" stroke=\"#1f5fa8\" stroke-width=\"2\"/>\n", strings.Join(pts, " "))
		}
		pts = pts[:0]
	}
	for i, y := range ys {
		if !y.hasData {
			flush()
			continue
		}
		pts = append(pts, svgNum(xOf(i))+","+svgNum(yOf(y.consumption)))
	}
	flush()
	b.WriteString("  <g class=\"points\">\n")
	for i, y := range ys {
		if y.hasData {
			fmt.Fprintf(&b, "    <circle class=\"point\" data-year=\"%d\" data-value=\"%s\" cx=\"%s\" cy=\"%s\" r=\"4\" fill=\"#1f5fa8\"><title>%d: %s %s</title></circle>\n",
				y.year, fmtFull(y.consumption), svgNum(xOf(i)), svgNum(yOf(y.consumption)), y.year, svgText(fmtUnit(y.consumption, unit)), svgText(unit))
		} else {
			fmt.Fprintf(&b, "    <circle class=\"point nodata\" data-year=\"%d\" cx=\"%s\" cy=\"%s\" r=\"4\" fill=\"white\" stroke=\"#888\"><title>%d: no data</title></circle>\n",
				y.year, svgNum(xOf(i)), svgNum(yOf(0)), y.year)
		}
	}
	b.WriteString("  </g>\n")

	// Legend and notice.
	ly := chartHeight - 22
	fmt.Fprintf(&b, `  <g class="legend">
    <line x1="%[1]s" y1="%[2]s" x2="%[3]s" y2="%[2]s" stroke="#1f5fa8" stroke-width="2"/>
    <circle cx="%[4]s" cy="%[2]s" r="4" fill="#1f5fa8"/>
    <text x="%[5]s" y="%[6]s">consumption (hollow: no data)</text>
    <line x1="%[7]s" y1="%[2]s" x2="%[8]s" y2="%[2]s" stroke="#c0392b" stroke-width="2.5"/>
    <text x="%[9]s" y="%[6]s">allowed level</text>
  </g>
`, svgNum(chartLeft), svgNum(ly), svgNum(chartLeft+30), svgNum(chartLeft+15), svgNum(chartLeft+36), svgNum(ly+4),
		svgNum(chartLeft+250), svgNum(chartLeft+280), svgNum(chartLeft+286))
	fmt.Fprintf(&b, "  <text class=\"notice\" x=\"%s\" y=\"%s\" font-size=\"10\" fill=\"#555\">%s</text>\n",
		svgNum(chartLeft), svgNum(chartHeight-6), svgText(decisionSupportNotice))
	b.WriteString("</svg>\n")
	_, err := io.WriteString(w, b.String())
	return err
}

// writeChartFile writes the chart to path.
func writeChartFile(path string, resp *halovetv1.AssessComplianceResponse) error {
	var b bytes.Buffer
	if err := writeChart(&b, resp); err != nil {
		return err
	}
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		return fmt.Errorf("--chart: %w", err)
	}
	return nil
}
