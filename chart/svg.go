package chart

import (
	"bytes"
	"encoding/xml"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// SVG writes the chart of c as a self-contained SVG document.
func SVG(w io.Writer, c Compliance) error {
	_, err := io.WriteString(w, layout(c).svg())
	return err
}

func num(v float64) string { return strconv.FormatFloat(v, 'f', 2, 64) }

func esc(s string) string {
	var b bytes.Buffer
	_ = xml.EscapeText(&b, []byte(s))
	return b.String()
}

func (sc *scene) svg() string {
	var b strings.Builder
	fmt.Fprintf(&b, `<?xml version="1.0" encoding="UTF-8"?>
<svg xmlns="http://www.w3.org/2000/svg" width="%s" height="%s" viewBox="0 0 %[1]s %[2]s" font-family="DejaVu Sans, Verdana, sans-serif" role="img" aria-labelledby="chart-title">
  <title id="chart-title">%s</title>
`, num(sc.width), num(sc.height), esc(sc.title))
	for _, s := range sc.shapes {
		b.WriteString("  ")
		attrs := fmt.Sprintf(`class="%s"`, esc(s.class))
		for _, d := range s.data {
			attrs += fmt.Sprintf(` data-%s="%s"`, d[0], esc(d[1]))
		}
		paint := ""
		if s.fill != "" {
			paint += fmt.Sprintf(` fill="%s"`, s.fill)
		} else if s.kind != kindText {
			paint += ` fill="none"`
		}
		if s.stroke != "" {
			paint += fmt.Sprintf(` stroke="%s" stroke-width="%s"`, s.stroke, num(s.width))
			if s.dash > 0 {
				paint += fmt.Sprintf(` stroke-dasharray="%s %[1]s"`, num(s.dash))
			}
		}
		tip := ""
		if s.text != "" && s.kind != kindText {
			tip = "<title>" + esc(s.text) + "</title>"
		}
		switch s.kind {
		case kindRect:
			x0, y0, x1, y1 := s.pts[0].x, s.pts[0].y, s.pts[1].x, s.pts[1].y
			open := fmt.Sprintf(`<rect %s x="%s" y="%s" width="%s" height="%s"%s`, attrs, num(x0), num(y0), num(x1-x0), num(y1-y0), paint)
			if tip != "" {
				b.WriteString(open + ">" + tip + "</rect>\n")
			} else {
				b.WriteString(open + "/>\n")
			}
		case kindLine:
			if len(s.pts) == 2 {
				fmt.Fprintf(&b, `<line %s x1="%s" y1="%s" x2="%s" y2="%s"%s/>`+"\n", attrs, num(s.pts[0].x), num(s.pts[0].y), num(s.pts[1].x), num(s.pts[1].y), paint)
				continue
			}
			ps := make([]string, len(s.pts))
			for i, p := range s.pts {
				ps[i] = num(p.x) + "," + num(p.y)
			}
			fmt.Fprintf(&b, `<polyline %s points="%s"%s stroke-linejoin="round"/>`+"\n", attrs, strings.Join(ps, " "), paint)
		case kindCircle:
			open := fmt.Sprintf(`<circle %s cx="%s" cy="%s" r="%s"%s`, attrs, num(s.pts[0].x), num(s.pts[0].y), num(s.r), paint)
			if tip != "" {
				b.WriteString(open + ">" + tip + "</circle>\n")
			} else {
				b.WriteString(open + "/>\n")
			}
		case kindText:
			a := map[anchor]string{anchorStart: "start", anchorMiddle: "middle", anchorEnd: "end"}[s.anchor]
			weight := ""
			if s.bold {
				weight = ` font-weight="bold"`
			}
			fmt.Fprintf(&b, `<text %s x="%s" y="%s" font-size="%s" text-anchor="%s"%s%s>%s</text>`+"\n",
				attrs, num(s.pts[0].x), num(s.pts[0].y), num(s.size), a, weight, paint, esc(s.text))
		}
	}
	b.WriteString("</svg>\n")
	return b.String()
}
