package main

import (
	"bytes"
	"encoding/xml"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// Tests of the compliance chart (SVG) and its axis steps, and of the year spans of the
// compliance notes.

// svgDoc is what the chart test reads of the SVG.
type svgNode struct {
	XMLName  xml.Name
	Attrs    []xml.Attr `xml:",any,attr"`
	Text     string     `xml:",chardata"`
	Children []svgNode  `xml:",any"`
}

func (n svgNode) attr(name string) string {
	for _, a := range n.Attrs {
		if a.Name.Local == name {
			return a.Value
		}
	}
	return ""
}

func (n svgNode) walk(fn func(svgNode)) {
	fn(n)
	for _, c := range n.Children {
		c.walk(fn)
	}
}

func TestChartIsSVGWithOnePointPerYear(t *testing.T) {
	resp := reportSample()
	path := filepath.Join(t.TempDir(), "c.svg")
	if err := writeChartFile(path, resp); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var doc svgNode
	if err := xml.Unmarshal(raw, &doc); err != nil {
		t.Fatalf("the chart is not well-formed XML: %v", err)
	}
	if doc.XMLName.Local != "svg" || doc.XMLName.Space != "http://www.w3.org/2000/svg" {
		t.Fatalf("root %v, want svg in the SVG namespace", doc.XMLName)
	}
	var years []string
	var allowed, line, texts []string
	doc.walk(func(n svgNode) {
		switch {
		case n.XMLName.Local == "circle" && strings.HasPrefix(n.attr("class"), "point"):
			years = append(years, n.attr("data-year"))
			if n.attr("data-year") == "2029" && !strings.Contains(n.attr("class"), "nodata") {
				t.Errorf("2029 has no data but its point is not marked nodata")
			}
		case n.XMLName.Local == "path" && n.attr("class") == "allowed":
			allowed = append(allowed, n.attr("d"))
		case n.XMLName.Local == "polyline" && n.attr("class") == "consumption":
			line = append(line, n.attr("points"))
		case n.XMLName.Local == "text":
			texts = append(texts, n.Text)
		}
	})
	if strings.Join(years, " ") != "2028 2029 2030 2031" {
		t.Fatalf("points for years %v; want one per year 2028-2031 in order", years)
	}
	// 2029 has no data but a known allowed level: the step line runs on; the consumption
	// line breaks there, so only 2030-2031 are joined.
	if len(allowed) != 1 || strings.Count(allowed[0], "M") != 1 || strings.Count(allowed[0], "H") != 4 {
		t.Errorf("allowed step line %q: want one unbroken path over 4 years", allowed)
	}
	if len(line) != 1 || len(strings.Fields(line[0])) != 2 {
		t.Errorf("consumption lines %q: want one, joining 2030 and 2031", line)
	}
	// Without a complete baseline the allowed level of a year without data is unknown,
	// and the step line breaks there.
	nb := reportSample()
	nb.BaselineComplete = false
	var raw2 bytes.Buffer
	if err := writeChart(&raw2, nb); err != nil {
		t.Fatal(err)
	}
	if got := strings.Count(raw2.String(), "M "); got != 2 {
		t.Errorf("allowed path with an unknown 2029 has %d pieces, want 2", got)
	}
	all := strings.Join(texts, "|")
	for _, want := range []string{"ODP t", "year", "2028", "2031", "decision support"} {
		if !strings.Contains(all, want) {
			t.Errorf("chart text lacks %q: %s", want, all)
		}
	}
	if bytes.Contains(raw, []byte("href")) || bytes.Contains(raw, []byte("<script")) {
		t.Error("the chart refers to something outside itself")
	}
}

func TestNiceStepAndYearList(t *testing.T) {
	cases := []struct{ raw, want float64 }{{0.37, 0.5}, {1, 1}, {1.2, 2}, {3, 5}, {7, 10}, {42000, 50000}, {0, 1}}
	for _, c := range cases {
		if got := niceStep(c.raw); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("niceStep(%v) = %v, want %v", c.raw, got, c.want)
		}
	}
	if got := yearList([]int{2020, 2021, 2022, 2025, 2027, 2028}); got != "2020–2022, 2025, 2027–2028" {
		t.Errorf("yearList = %q", got)
	}
}
