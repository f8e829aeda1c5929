package main

import (
	"bytes"
	"encoding/xml"
	"image/png"
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

func TestChartFileSVGAndPNG(t *testing.T) {
	resp := reportSample()
	dir := t.TempDir()
	path := filepath.Join(dir, "c.svg")
	if err := writeChartFile(path, resp, "Examplia (invented)"); err != nil {
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
	var points, nodata []string
	var title string
	doc.walk(func(n svgNode) {
		cls := " " + n.attr("class") + " "
		switch {
		case strings.Contains(cls, " point "):
			points = append(points, n.attr("data-year"))
		case strings.Contains(cls, " nodata "):
			nodata = append(nodata, n.attr("data-year"))
		case n.XMLName.Local == "title" && n.attr("id") == "chart-title":
			title = n.Text
		}
	})
	// 2029 has no data: no point, a no-data column instead.
	if strings.Join(points, " ") != "2028 2030 2031" || strings.Join(nodata, " ") != "2029" {
		t.Errorf("points for %v, no-data columns for %v; want points 2028 2030 2031 and no data 2029", points, nodata)
	}
	if !strings.HasPrefix(title, "Examplia (invented): Annex C Group I (HCFCs) consumption") || !strings.Contains(title, "Article 5 schedule") {
		t.Errorf("title %q", title)
	}
	if bytes.Contains(raw, []byte("href")) || bytes.Contains(raw, []byte("<script")) {
		t.Error("the chart refers to something outside itself")
	}
	pngPath := filepath.Join(dir, "c.png")
	if err := writeChartFile(pngPath, resp, ""); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(pngPath)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if _, err := png.Decode(f); err != nil {
		t.Errorf("--chart c.png is not a PNG: %v", err)
	}
	if chartFormatOK("c.pdf") || !chartFormatOK("C.PNG") || !chartFormatOK("c.svg") {
		t.Error("chartFormatOK accepts the wrong names")
	}
}

func TestYearList(t *testing.T) {
	if got := yearList([]int{2020, 2021, 2022, 2025, 2027, 2028}); got != "2020–2022, 2025, 2027–2028" {
		t.Errorf("yearList = %q", got)
	}
}
