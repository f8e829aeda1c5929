package chart

// A scene is the chart as shapes in user units (SVG's coordinate system: y grows
// downwards). Every shape has a class, which the SVG keeps, so that tests and style sheets
// can find the parts of the chart.

type point struct{ x, y float64 }

type shapeKind int

const (
	kindRect shapeKind = iota
	kindLine           // an open polyline through pts
	kindCircle
	kindText
)

type anchor int

const (
	anchorStart anchor = iota
	anchorMiddle
	anchorEnd
)

type shape struct {
	kind   shapeKind
	class  string
	pts    []point // kindLine: the points; kindRect: [top-left, bottom-right]; kindCircle, kindText: [position]
	r      float64 // kindCircle
	fill   string  // "" is none
	stroke string  // "" is none
	width  float64 // stroke width
	dash   float64 // dash length (gap the same); 0 is solid
	text   string  // kindText: the text; kindCircle and kindRect: the tooltip
	size   float64 // kindText: font size
	bold   bool
	anchor anchor
	data   [][2]string // data-* attributes for the SVG (name without the prefix, value)
}

type scene struct {
	width, height float64
	title         string // the document title (the SVG's <title>)
	shapes        []shape
}

func (sc *scene) add(s shape) { sc.shapes = append(sc.shapes, s) }

func (sc *scene) line(class, stroke string, width, dash float64, pts ...point) {
	sc.add(shape{kind: kindLine, class: class, stroke: stroke, width: width, dash: dash, pts: pts})
}

func (sc *scene) rect(class, fill string, x0, y0, x1, y1 float64, tip string) {
	sc.add(shape{kind: kindRect, class: class, fill: fill, pts: []point{{x0, y0}, {x1, y1}}, text: tip})
}

func (sc *scene) textAt(class string, x, y, size float64, a anchor, fill, s string) {
	sc.add(shape{kind: kindText, class: class, pts: []point{{x, y}}, size: size, anchor: a, fill: fill, text: s})
}
