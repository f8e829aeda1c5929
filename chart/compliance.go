package chart

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
)

// Year is one year's figures as the chart reads them. The figures are the nearest floats of
// the answer's exact decimals: the chart places them and labels them rounded (figure), and
// its data-value attributes carry the shortest decimal of the float, which is the
// answer's decimal for any figure of up to 15 significant digits.
type Year struct {
	Year        int
	Consumption float64
	HasData     bool    // false: no consumption was reported (not the same as zero)
	Allowed     float64 // the allowed level, when HasAllowed
	HasAllowed  bool
	Exceeded    bool // consumption above the allowed level (the assessment's outcome)
	Provisional bool // the current year: its figures are not final
}

// Compliance is what the chart draws.
type Compliance struct {
	Party       string // the Party's name ("" leaves it out of the title)
	Scope       string // "C/I", "F"
	GroupName   string // "Annex C Group I (HCFCs)"
	Schedule    string // "Article 5 schedule", "non-Article 5 schedule"
	Unit        string // "ODP t", "CO2-eq t"
	Baseline    float64
	HasBaseline bool
	Years       []Year
	Notice      string // the decision-support sentence printed at the foot
}

// Notice is the decision-support sentence the chart ends with unless told otherwise.
const Notice = "Results are decision support: the treaty text, national law, the national authority and licensed practice prevail."

// FromAssessment reads an AssessCompliance answer. party is the reporting Party's name;
// currentYear is the calendar year now (its figures are provisional; 0 marks none).
func FromAssessment(resp *halovetv1.AssessComplianceResponse, party string, currentYear int) Compliance {
	c := Compliance{
		Party: party, Scope: resp.GetAnnexGroup(), Unit: wireterms.ControlUnitText(resp.GetUnit()),
		Baseline: wireNum(resp.GetBaselineAmount()), HasBaseline: resp.GetBaselineComplete() && resp.GetBaselineAmount() != "",
		Schedule: scheduleName(resp.GetAppliesTo()), Notice: Notice,
	}
	if sc, err := controls.ParseScope(resp.GetAnnexGroup()); err == nil {
		c.GroupName = sc.FullName()
	}
	if c.GroupName == "" {
		c.GroupName = resp.GetAnnexGroup()
	}
	for _, y := range resp.GetYears() {
		o := y.GetOutcome()
		assessed := o == halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_WITHIN || o == halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED
		cy := Year{
			Year: int(y.GetYear()), Consumption: wireNum(y.GetConsumptionAmount()), HasData: y.GetHasData(), Allowed: wireNum(y.GetAllowedAmount()),
			Exceeded: o == halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED,
			// The allowed level is known when the year was assessed (a period-average year
			// shows the period's mean level), and in a year without data when a step is in
			// force and either the baseline is complete or the step is 0 % (which needs no
			// baseline).
			HasAllowed:  assessed || (hasStepNote(y) && (y.GetAllowedPercent() == "0" || resp.GetBaselineComplete())),
			Provisional: currentYear != 0 && int(y.GetYear()) == currentYear,
		}
		c.Years = append(c.Years, cy)
	}
	return c
}

// hasStepNote tells a year with a control step in force from one before the first control
// measure: the assessment notes the step in force (controls.Rulebook.Assess).
func hasStepNote(y *halovetv1.ComplianceYear) bool {
	for _, n := range y.GetNotes() {
		if strings.HasPrefix(n, "step in force") {
			return true
		}
	}
	return false
}

func scheduleName(s halovetv1.ControlSchedule) string {
	switch s {
	case halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5:
		return "Article 5 schedule"
	case halovetv1.ControlSchedule_CONTROL_SCHEDULE_NON_ARTICLE_5:
		return "non-Article 5 schedule"
	case halovetv1.ControlSchedule_CONTROL_SCHEDULE_NON_ARTICLE_5_HFC_LATER_START:
		return "non-Article 5 schedule, later start"
	case halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5_HFC_FIRST_GROUP:
		return "Article 5 schedule, first HFC group"
	case halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5_HFC_SECOND_GROUP:
		return "Article 5 schedule, second HFC group"
	}
	return ""
}

// wireNum reads a wire decimal as the nearest float, for placing it; "" and an unreadable
// figure are 0 (the answer's presence flags say whether a figure is known).
func wireNum(s string) float64 {
	d, ok, err := exact.ParseField("", s)
	if err != nil || !ok {
		return 0
	}
	return d.Float64()
}

// Title is the chart's title: "Republic of Examplia: Annex C Group I (HCFCs) consumption
// against the allowed level, Article 5 schedule".
func (c Compliance) Title() string {
	var b strings.Builder
	if c.Party != "" {
		b.WriteString(c.Party + ": ")
	}
	b.WriteString(c.GroupName + " consumption against the allowed level")
	if c.Schedule != "" {
		b.WriteString(", " + c.Schedule)
	}
	return b.String()
}

// Excess is how far consumption went over the allowed level in an exceeded year.
func (y Year) Excess() float64 { return y.Consumption - y.Allowed }

// Colours: each has a contrast of at least 4.5:1 on white (WCAG 2.x AA for text), and the
// parts are told apart by shape and dash as well, never by colour alone.
const (
	colConsumption = "#1f5fa8" // 6.4:1
	colAllowed     = "#8a4b00" // 6.6:1
	colBaseline    = "#4d4d4d" // 8.5:1
	colExceeded    = "#b00020" // 7.2:1
	colText        = "#222222"
	colMuted       = "#555555" // 7.5:1
	colGrid        = "#dddddd"
	colNoData      = "#ececec"
)

// Geometry in user units.
const (
	width      = 800.0
	height     = 480.0
	plotLeft   = 90.0
	plotRight  = 24.0
	plotTop    = 78.0
	plotBottom = 118.0
)

// layout draws c as a scene.
func layout(c Compliance) *scene {
	sc := &scene{width: width, height: height, title: c.Title()}
	ys := c.Years
	lo, hi := 0.0, 0.0
	for _, y := range ys {
		if y.HasData {
			lo, hi = math.Min(lo, y.Consumption), math.Max(hi, y.Consumption)
		}
		if y.HasAllowed {
			lo, hi = math.Min(lo, y.Allowed), math.Max(hi, y.Allowed)
		}
	}
	if c.HasBaseline {
		lo, hi = math.Min(lo, c.Baseline), math.Max(hi, c.Baseline)
	}
	if hi == lo {
		hi = lo + 1
	}
	hi += (hi - lo) * 0.08 // room for the excess labels above the highest point
	step := niceStep((hi - lo) / 5)
	lo = math.Floor(lo/step) * step
	hi = math.Ceil(hi/step) * step
	if hi == lo {
		hi = lo + step
	}
	plotW := width - plotLeft - plotRight
	plotH := height - plotTop - plotBottom
	bottom := plotTop + plotH
	n := len(ys)
	band := plotW / float64(max(n, 1))
	xOf := func(i int) float64 { return plotLeft + (float64(i)+0.5)*band }
	yOf := func(v float64) float64 { return plotTop + (hi-v)/(hi-lo)*plotH }

	sc.rect("background", "#ffffff", 0, 0, width, height, "")
	// The title on two lines: who and what, then against what.
	head := c.GroupName + " consumption"
	if c.Party != "" {
		head = c.Party + ": " + head
	}
	sub := "against the allowed level"
	if c.Schedule != "" {
		sub += ", " + c.Schedule
	}
	sc.add(shape{kind: kindText, class: "title", pts: []point{{width / 2, 24}}, size: 16, bold: true, anchor: anchorMiddle, fill: colText, text: head})
	sc.textAt("subtitle", width/2, 44, 13, anchorMiddle, colText, sub)
	sc.textAt("axis-label", plotLeft, plotTop-12, 12, anchorStart, colText, c.Unit)

	// Years without data: a shaded column over the whole plot, labelled.
	for i, y := range ys {
		if y.HasData {
			continue
		}
		x0 := plotLeft + float64(i)*band
		sc.add(shape{kind: kindRect, class: "nodata", fill: colNoData, pts: []point{{x0 + 1, plotTop}, {x0 + band - 1, bottom}},
			text: fmt.Sprintf("%d: no data", y.Year), data: [][2]string{{"year", strconv.Itoa(y.Year)}}})
		label := "no data"
		if band < 46 {
			label = "n/d"
		}
		sc.textAt("nodata-label", xOf(i), plotTop+14, 10, anchorMiddle, colMuted, label)
	}

	// Grid and y-axis ticks.
	for v := lo; v <= hi+step/2; v += step {
		y := yOf(v)
		sc.line("grid", colGrid, 1, 0, point{plotLeft, y}, point{width - plotRight, y})
		sc.textAt("tick", plotLeft-6, y+4, 11, anchorEnd, colText, tick(v, step))
	}
	sc.line("axis", colText, 1, 0, point{plotLeft, plotTop}, point{plotLeft, bottom})
	sc.line("axis", colText, 1, 0, point{plotLeft, yOf(0)}, point{width - plotRight, yOf(0)})

	// Year labels: all of them when they fit, else every k-th (and always the last and the
	// provisional one).
	every := 1
	for float64(every)*band < 36 {
		every++
	}
	for i, y := range ys {
		if i%every == 0 || i == n-1 || y.Provisional {
			sc.textAt("year", xOf(i), bottom+18, 11, anchorMiddle, colText, strconv.Itoa(y.Year))
		}
		if y.Provisional {
			sc.textAt("provisional-label", xOf(i), bottom+32, 10, anchorMiddle, colMuted, "provisional")
		}
	}

	// Baseline: a dashed line across the plot, labelled with its figure.
	if c.HasBaseline {
		by := yOf(c.Baseline)
		sc.line("baseline", colBaseline, 1.5, 6, point{plotLeft, by}, point{width - plotRight, by})
		sc.textAt("baseline-label", width-plotRight-4, by-5, 11, anchorEnd, colBaseline, "baseline "+figure(c.Baseline))
	}

	// Allowed level: a step line over each year's band, broken where a year has none.
	var run []point
	flushAllowed := func() {
		if len(run) > 1 {
			sc.line("allowed", colAllowed, 2.5, 0, run...)
		}
		run = nil
	}
	for i, y := range ys {
		if !y.HasAllowed {
			flushAllowed()
			continue
		}
		x0, x1, yy := plotLeft+float64(i)*band, plotLeft+float64(i+1)*band, yOf(y.Allowed)
		run = append(run, point{x0, yy}, point{x1, yy}) // joined to the year before by a vertical step
	}
	flushAllowed()

	// Consumption: lines through runs of consecutive years with data (a year without data
	// breaks the line rather than being bridged); the segment into a provisional year is
	// dashed.
	var pts []point
	flush := func() {
		if len(pts) > 1 {
			sc.line("consumption", colConsumption, 2, 0, pts...)
		}
		pts = nil
	}
	for i, y := range ys {
		if !y.HasData {
			flush()
			continue
		}
		p := point{xOf(i), yOf(y.Consumption)}
		if y.Provisional {
			if len(pts) > 0 {
				sc.line("consumption provisional", colConsumption, 2, 5, pts[len(pts)-1], p)
			}
			flush()
			continue
		}
		pts = append(pts, p)
	}
	flush()

	// Points: a circle per year with data, a square for an exceeded year with its excess
	// written above it, hollow when provisional.
	for i, y := range ys {
		if !y.HasData {
			continue
		}
		x, yy := xOf(i), yOf(y.Consumption)
		class, fill, stroke, col := "point", colConsumption, colConsumption, colConsumption
		tip := fmt.Sprintf("%d: %s %s", y.Year, figure(y.Consumption), c.Unit)
		if y.Exceeded {
			class, col = "point exceeded", colExceeded
			fill, stroke = colExceeded, colExceeded
			tip += fmt.Sprintf(", %s over the allowed level", figure(y.Excess()))
		}
		if y.Provisional {
			class += " provisional"
			fill = "#ffffff"
			tip += " (provisional)"
		}
		data := [][2]string{{"year", strconv.Itoa(y.Year)}, {"value", strconv.FormatFloat(y.Consumption, 'g', -1, 64)}}
		if y.Exceeded {
			sc.add(shape{kind: kindRect, class: class, fill: fill, pts: []point{{x - 5, yy - 5}, {x + 5, yy + 5}}, text: tip, data: data})
			sc.add(shape{kind: kindRect, class: "marker-outline", fill: "", stroke: stroke, width: 1.5, pts: []point{{x - 5, yy - 5}, {x + 5, yy + 5}}})
			sc.add(shape{kind: kindText, class: "excess", pts: []point{{x, yy - 10}}, size: 11, bold: true, anchor: anchorMiddle, fill: col,
				text: "+" + figure(y.Excess()), data: [][2]string{{"year", strconv.Itoa(y.Year)}}})
		} else {
			sc.add(shape{kind: kindCircle, class: class, fill: fill, stroke: stroke, width: 2, r: 4.5, pts: []point{{x, yy}}, text: tip, data: data})
		}
	}

	// Legend, two rows of three, and the notice.
	ly := bottom + 52
	col := []float64{plotLeft, plotLeft + 235, plotLeft + 470}
	sc.line("legend", colConsumption, 2, 0, point{col[0], ly}, point{col[0] + 28, ly})
	sc.add(shape{kind: kindCircle, class: "legend", fill: colConsumption, stroke: colConsumption, width: 2, r: 4, pts: []point{{col[0] + 14, ly}}})
	sc.textAt("legend", col[0]+36, ly+4, 11, anchorStart, colText, "consumption")
	sc.add(shape{kind: kindRect, class: "legend", fill: colExceeded, pts: []point{{col[1] + 9, ly - 5}, {col[1] + 19, ly + 5}}})
	sc.textAt("legend", col[1]+36, ly+4, 11, anchorStart, colText, "exceeded (+ excess)")
	sc.line("legend", colAllowed, 2.5, 0, point{col[2], ly}, point{col[2] + 28, ly})
	sc.textAt("legend", col[2]+36, ly+4, 11, anchorStart, colText, "allowed level")
	ly += 20
	sc.line("legend", colBaseline, 1.5, 6, point{col[0], ly}, point{col[0] + 28, ly})
	sc.textAt("legend", col[0]+36, ly+4, 11, anchorStart, colText, "baseline")
	sc.rect("legend", colNoData, col[1]+4, ly-8, col[1]+24, ly+8, "")
	sc.textAt("legend", col[1]+36, ly+4, 11, anchorStart, colText, "no data reported")
	sc.add(shape{kind: kindCircle, class: "legend", fill: "#ffffff", stroke: colConsumption, width: 2, r: 4, pts: []point{{col[2] + 14, ly}}})
	sc.textAt("legend", col[2]+36, ly+4, 11, anchorStart, colText, "provisional (current year)")
	if c.Notice != "" {
		sc.textAt("notice", plotLeft, height-10, 10, anchorStart, colMuted, c.Notice)
	}
	return sc
}
