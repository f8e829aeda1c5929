package chart

import (
	"bytes"
	"encoding/xml"
	"image/png"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// The figures below are invented (our demo scenario's fictional Party), chosen to put
// every mark on the chart: an exceeded year, a year without data, a provisional year.

func sample() Compliance {
	return Compliance{
		Party: "Republic of Examplia (invented)", Scope: "C/I", GroupName: "Annex C Group I (HCFCs)",
		Schedule: "Article 5 schedule", Unit: "ODP t", Baseline: 520000, HasBaseline: true, Notice: Notice,
		Years: []Year{
			{Year: 2021, Consumption: 300000, HasData: true, Allowed: 338000, HasAllowed: true},
			{Year: 2022, Consumption: 410000, HasData: true, Allowed: 338000, HasAllowed: true, Exceeded: true},
			{Year: 2023, Allowed: 338000, HasAllowed: true}, // no data reported
			{Year: 2024, Consumption: 250000, HasData: true, Allowed: 338000, HasAllowed: true},
			{Year: 2025, Consumption: 200000, HasData: true, Allowed: 169000, HasAllowed: true, Exceeded: true},
			{Year: 2026, Consumption: 60000, HasData: true, Allowed: 169000, HasAllowed: true, Provisional: true},
		},
	}
}

type node struct {
	XMLName  xml.Name
	Attrs    []xml.Attr `xml:",any,attr"`
	Text     string     `xml:",chardata"`
	Children []node     `xml:",any"`
}

func (n node) attr(name string) string {
	for _, a := range n.Attrs {
		if a.Name.Local == name {
			return a.Value
		}
	}
	return ""
}

func (n node) walk(fn func(node)) {
	fn(n)
	for _, c := range n.Children {
		c.walk(fn)
	}
}

func (n node) hasClass(c string) bool {
	for _, f := range strings.Fields(n.attr("class")) {
		if f == c {
			return true
		}
	}
	return false
}

func render(t *testing.T, c Compliance) node {
	t.Helper()
	var b bytes.Buffer
	if err := SVG(&b, c); err != nil {
		t.Fatal(err)
	}
	if dir := os.Getenv("CHART_OUT"); dir != "" { // to look at the chart: CHART_OUT=/tmp go test ./chart
		_ = os.WriteFile(filepath.Join(dir, t.Name()+".svg"), b.Bytes(), 0o644)
	}
	var doc node
	if err := xml.Unmarshal(b.Bytes(), &doc); err != nil {
		t.Fatalf("the chart is not well-formed XML: %v\n%s", err, b.String())
	}
	if doc.XMLName.Local != "svg" || doc.XMLName.Space != "http://www.w3.org/2000/svg" {
		t.Fatalf("root %v, want svg in the SVG namespace", doc.XMLName)
	}
	return doc
}

func f(t *testing.T, s string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("%q: %v", s, err)
	}
	return v
}

func TestThousands(t *testing.T) {
	for _, c := range []struct {
		v    float64
		d    int
		want string
	}{ // common practice: a comma between groups of three digits, a point before decimals
		{500000, 0, "500,000"},
		{1000, 0, "1,000"},
		{999, 0, "999"},
		{1234.5, 2, "1,234.5"},
		{-1234567.891, 2, "-1,234,567.89"},
		{0.25, 2, "0.25"},
		{-0.001, 2, "0"},
		{12, 2, "12"},
	} {
		if got := Thousands(c.v, c.d); got != c.want {
			t.Errorf("Thousands(%v, %d) = %q, want %q", c.v, c.d, got, c.want)
		}
	}
}

func TestChartTitleNamesPartyGroupAndSchedule(t *testing.T) {
	doc := render(t, sample())
	var title, head, sub string
	doc.walk(func(n node) {
		switch {
		case n.XMLName.Local == "title" && n.attr("id") == "chart-title":
			title = n.Text
		case n.hasClass("title"):
			head = n.Text
		case n.hasClass("subtitle"):
			sub = n.Text
		}
	})
	want := "Republic of Examplia (invented): Annex C Group I (HCFCs) consumption against the allowed level, Article 5 schedule"
	if title != want {
		t.Errorf("document title %q, want %q", title, want)
	}
	if head+" "+sub != want {
		t.Errorf("drawn title %q + %q, want %q", head, sub, want)
	}
}

func TestChartMarksExceededYearsWithTheExcess(t *testing.T) {
	doc := render(t, sample())
	excess := map[string]string{}
	marked := map[string]bool{}
	doc.walk(func(n node) {
		if n.hasClass("excess") {
			excess[n.attr("data-year")] = n.Text
		}
		if n.hasClass("point") && n.hasClass("exceeded") {
			marked[n.attr("data-year")] = true
			if n.XMLName.Local != "rect" {
				t.Errorf("exceeded %s drawn as %s; want a square, not only a colour", n.attr("data-year"), n.XMLName.Local)
			}
		}
		if n.hasClass("point") && !n.hasClass("exceeded") && (n.attr("data-year") == "2022" || n.attr("data-year") == "2025") {
			t.Errorf("exceeded year %s has an unmarked point", n.attr("data-year"))
		}
	})
	// 410,000 - 338,000 and 200,000 - 169,000 (the invented sample's figures).
	if excess["2022"] != "+72,000" || excess["2025"] != "+31,000" || len(excess) != 2 {
		t.Errorf("excess labels %v; want 2022 +72,000 and 2025 +31,000 only", excess)
	}
	if !marked["2022"] || !marked["2025"] || len(marked) != 2 {
		t.Errorf("exceeded markers for %v; want 2022 and 2025", marked)
	}
}

func TestChartLeavesYearsWithoutDataOutOfTheLine(t *testing.T) {
	doc := render(t, sample())
	var gapX0, gapX1 float64
	var lines [][]float64
	doc.walk(func(n node) {
		if n.hasClass("nodata") {
			if n.attr("data-year") != "2023" {
				t.Errorf("no-data column for %s; only 2023 lacks data", n.attr("data-year"))
			}
			gapX0 = f(t, n.attr("x"))
			gapX1 = gapX0 + f(t, n.attr("width"))
		}
		if n.hasClass("point") && n.attr("data-year") == "2023" {
			t.Errorf("2023 has no data but is drawn as a point (%s)", n.attr("class"))
		}
		if n.hasClass("consumption") {
			var xs []float64
			if n.XMLName.Local == "line" {
				xs = []float64{f(t, n.attr("x1")), f(t, n.attr("x2"))}
			} else {
				for _, p := range strings.Fields(n.attr("points")) {
					x, _, _ := strings.Cut(p, ",")
					xs = append(xs, f(t, x))
				}
			}
			lines = append(lines, xs)
		}
	})
	if gapX1 == 0 {
		t.Fatal("no no-data column drawn for 2023")
	}
	for _, xs := range lines {
		lo, hi := xs[0], xs[len(xs)-1]
		if lo < gapX1 && hi > gapX0 {
			t.Errorf("a consumption line runs from x=%v to x=%v across the no-data year (%v-%v)", lo, hi, gapX0, gapX1)
		}
	}
	// 2021-2022, then 2024-2025, then the dashed step into the provisional 2026.
	if len(lines) != 3 {
		t.Errorf("%d consumption lines %v; want 3", len(lines), lines)
	}
}

func TestChartDrawsBaselineAllowedLevelAndSeparators(t *testing.T) {
	doc := render(t, sample())
	var baseline, baseLabel, allowed int
	var ticks []string
	doc.walk(func(n node) {
		switch {
		case n.hasClass("baseline"):
			baseline++
			if n.attr("stroke-dasharray") == "" {
				t.Error("the baseline is not dashed")
			}
		case n.hasClass("baseline-label"):
			baseLabel++
			if n.Text != "baseline 520,000" {
				t.Errorf("baseline label %q, want \"baseline 520,000\"", n.Text)
			}
		case n.hasClass("allowed"):
			allowed++
			// 6 years in one run: two points per year.
			if got := len(strings.Fields(n.attr("points"))); got != 12 {
				t.Errorf("allowed step line has %d points, want 12", got)
			}
		case n.hasClass("tick"):
			ticks = append(ticks, n.Text)
		}
	})
	if baseline != 1 || baseLabel != 1 || allowed != 1 {
		t.Errorf("baseline %d, its label %d, allowed lines %d; want one each", baseline, baseLabel, allowed)
	}
	sawSep := false
	for _, tk := range ticks {
		if strings.Contains(tk, ",") {
			sawSep = true
		}
		if len(strings.ReplaceAll(tk, ",", "")) > 3 && !strings.Contains(tk, ",") {
			t.Errorf("tick %q lacks a thousands separator", tk)
		}
	}
	if !sawSep {
		t.Errorf("ticks %v: none with a separator", ticks)
	}
}

func TestChartMarksTheCurrentYearProvisional(t *testing.T) {
	doc := render(t, sample())
	var label, point, dashed bool
	doc.walk(func(n node) {
		if n.hasClass("provisional-label") && n.Text == "provisional" {
			label = true
		}
		if n.hasClass("point") && n.hasClass("provisional") {
			point = n.attr("data-year") == "2026" && n.attr("fill") == "#ffffff"
		}
		if n.hasClass("consumption") && n.hasClass("provisional") && n.attr("stroke-dasharray") != "" {
			dashed = true
		}
		if n.hasClass("point") && n.hasClass("provisional") && n.attr("data-year") != "2026" {
			t.Errorf("%s marked provisional", n.attr("data-year"))
		}
	})
	if !label || !point || !dashed {
		t.Errorf("provisional label %v, hollow 2026 point %v, dashed line into it %v; want all", label, point, dashed)
	}
}

func TestFromAssessment(t *testing.T) {
	resp := &halovetv1.AssessComplianceResponse{
		AnnexGroup: "C/I", Unit: halovetv1.ControlUnit_CONTROL_UNIT_ODP_TONNES, BaselineAmount: "100", BaselineComplete: true,
		AppliesTo: halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5,
		Years: []*halovetv1.ComplianceYear{
			{Year: 2025, ConsumptionAmount: "80", HasData: true, AllowedAmount: "65", Outcome: halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_EXCEEDED},
			{Year: 2026, AllowedAmount: "65", Outcome: halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_NOT_ASSESSED, Notes: []string{"step in force since 2025"}},
			{Year: 2027, Outcome: halovetv1.ComplianceOutcome_COMPLIANCE_OUTCOME_NOT_ASSESSED},
		},
	}
	c := FromAssessment(resp, "Examplia", 2026)
	if c.GroupName != "Annex C Group I (HCFCs)" || c.Schedule != "Article 5 schedule" || c.Party != "Examplia" {
		t.Errorf("group %q, schedule %q, party %q", c.GroupName, c.Schedule, c.Party)
	}
	want := []Year{
		{Year: 2025, Consumption: 80, HasData: true, Allowed: 65, HasAllowed: true, Exceeded: true},
		{Year: 2026, Allowed: 65, HasAllowed: true, Provisional: true},
		{Year: 2027},
	}
	if len(c.Years) != len(want) {
		t.Fatalf("years %+v", c.Years)
	}
	for i := range want {
		if c.Years[i] != want[i] {
			t.Errorf("year %d: %+v, want %+v", i, c.Years[i], want[i])
		}
	}
	if e := c.Years[0].Excess(); e != 15 {
		t.Errorf("excess %v, want 15", e)
	}
}

func TestPNGDrawsTheSameChart(t *testing.T) {
	c := sample()
	var b bytes.Buffer
	if err := PNG(&b, c); err != nil {
		t.Fatal(err)
	}
	if dir := os.Getenv("CHART_OUT"); dir != "" {
		_ = os.WriteFile(filepath.Join(dir, t.Name()+".png"), b.Bytes(), 0o644)
	}
	img, err := png.Decode(&b)
	if err != nil {
		t.Fatalf("not a PNG: %v", err)
	}
	if got := img.Bounds().Size(); got.X != int(width*PNGScale) || got.Y != int(height*PNGScale) {
		t.Fatalf("size %v", got)
	}
	// Find the exceeded marker of 2022 and the no-data column of 2023 in the scene, and
	// check the pixels there carry their colours.
	sc := layout(c)
	at := func(x, y float64) (r, g, b uint32) {
		r, g, b, _ = img.At(int(x*PNGScale), int(y*PNGScale)).RGBA()
		return r >> 8, g >> 8, b >> 8
	}
	var checked int
	for _, s := range sc.shapes {
		if s.kind == kindRect && strings.Contains(s.class, "exceeded") {
			cx, cy := (s.pts[0].x+s.pts[1].x)/2, (s.pts[0].y+s.pts[1].y)/2
			if r, g, b := at(cx, cy); r != 0xb0 || g != 0x00 || b != 0x20 {
				t.Errorf("exceeded marker at %v,%v is #%02x%02x%02x, want #b00020", cx, cy, r, g, b)
			}
			checked++
		}
		if s.kind == kindRect && s.class == "nodata" {
			x, y := s.pts[0].x+3, s.pts[1].y-3
			if r, g, b := at(x, y); r != 0xec || g != 0xec || b != 0xec {
				t.Errorf("no-data column at %v,%v is #%02x%02x%02x, want #ececec", x, y, r, g, b)
			}
			checked++
		}
	}
	if checked != 3 {
		t.Errorf("checked %d marks, want 3 (two exceeded, one no-data)", checked)
	}
}

func TestNiceStep(t *testing.T) {
	// common practice: axis steps of 1, 2 or 5 times a power of ten
	cases := []struct{ raw, want float64 }{{0.37, 0.5}, {1, 1}, {1.2, 2}, {3, 5}, {7, 10}, {42000, 50000}, {0, 1}}
	for _, c := range cases {
		if got := niceStep(c.raw); got < c.want*(1-1e-12) || got > c.want*(1+1e-12) {
			t.Errorf("niceStep(%v) = %v, want %v", c.raw, got, c.want)
		}
	}
}
