package chart

import (
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"image/png"
	"io"
	"math"
	"strconv"
	"sync"

	"golang.org/x/image/font"
	"golang.org/x/image/font/gofont/gobold"
	"golang.org/x/image/font/gofont/goregular"
	"golang.org/x/image/font/opentype"
	"golang.org/x/image/math/fixed"
	"golang.org/x/image/vector"
)

// PNGScale is how many pixels the PNG gives one SVG user unit (1600 × 960 pixels), sharp
// enough for a printed report.
const PNGScale = 2.0

// PNG writes the chart of c as a PNG image, rasterised in pure Go from the same scene as
// the SVG.
func PNG(w io.Writer, c Compliance) error {
	img, err := layout(c).raster(PNGScale)
	if err != nil {
		return err
	}
	return png.Encode(w, img)
}

var (
	fontsOnce sync.Once
	fontsErr  error
	regular   *opentype.Font
	bold      *opentype.Font
)

func loadFonts() error {
	fontsOnce.Do(func() {
		if regular, fontsErr = opentype.Parse(goregular.TTF); fontsErr != nil {
			return
		}
		bold, fontsErr = opentype.Parse(gobold.TTF)
	})
	return fontsErr
}

type rasterizer struct {
	dst   *image.RGBA
	scale float64
	r     *vector.Rasterizer
	faces map[string]font.Face
}

func (sc *scene) raster(scale float64) (*image.RGBA, error) {
	if err := loadFonts(); err != nil {
		return nil, fmt.Errorf("chart fonts: %w", err)
	}
	w, h := int(math.Ceil(sc.width*scale)), int(math.Ceil(sc.height*scale))
	rs := &rasterizer{dst: image.NewRGBA(image.Rect(0, 0, w, h)), scale: scale, r: vector.NewRasterizer(w, h), faces: map[string]font.Face{}}
	defer func() {
		for _, f := range rs.faces {
			_ = f.Close()
		}
	}()
	draw.Draw(rs.dst, rs.dst.Bounds(), image.White, image.Point{}, draw.Src)
	for _, s := range sc.shapes {
		if err := rs.shape(s); err != nil {
			return nil, err
		}
	}
	return rs.dst, nil
}

func parseColour(s string) color.RGBA {
	if len(s) != 7 || s[0] != '#' {
		return color.RGBA{A: 255}
	}
	v, err := strconv.ParseUint(s[1:], 16, 32)
	if err != nil {
		return color.RGBA{A: 255}
	}
	return color.RGBA{R: uint8(v >> 16), G: uint8(v >> 8), B: uint8(v), A: 255}
}

// fillPath fills the polygons (each closed), in user units.
func (rs *rasterizer) fillPath(col string, polys ...[]point) {
	rs.r.Reset(rs.dst.Bounds().Dx(), rs.dst.Bounds().Dy())
	for _, poly := range polys {
		if len(poly) < 3 {
			continue
		}
		rs.r.MoveTo(float32(poly[0].x*rs.scale), float32(poly[0].y*rs.scale))
		for _, p := range poly[1:] {
			rs.r.LineTo(float32(p.x*rs.scale), float32(p.y*rs.scale))
		}
		rs.r.ClosePath()
	}
	rs.r.Draw(rs.dst, rs.dst.Bounds(), image.NewUniform(parseColour(col)), image.Point{})
}

func circlePoly(c point, r float64, reverse bool) []point {
	const n = 36
	out := make([]point, n)
	for i := range n {
		a := 2 * math.Pi * float64(i) / n
		if reverse {
			a = -a
		}
		out[i] = point{c.x + r*math.Cos(a), c.y + r*math.Sin(a)}
	}
	return out
}

// segment fills one stroked segment with round ends.
func (rs *rasterizer) segment(col string, w float64, a, b point) {
	dx, dy := b.x-a.x, b.y-a.y
	l := math.Hypot(dx, dy)
	if l == 0 {
		return
	}
	nx, ny := -dy/l*w/2, dx/l*w/2
	rs.fillPath(col, []point{{a.x + nx, a.y + ny}, {b.x + nx, b.y + ny}, {b.x - nx, b.y - ny}, {a.x - nx, a.y - ny}})
	if w >= 2 {
		rs.fillPath(col, circlePoly(a, w/2, false))
		rs.fillPath(col, circlePoly(b, w/2, false))
	}
}

// stroke draws an open polyline, dashed when dash > 0.
func (rs *rasterizer) stroke(col string, w, dash float64, pts []point) {
	if dash <= 0 {
		for i := 1; i < len(pts); i++ {
			rs.segment(col, w, pts[i-1], pts[i])
		}
		return
	}
	on, left := true, dash
	for i := 1; i < len(pts); i++ {
		a, b := pts[i-1], pts[i]
		l := math.Hypot(b.x-a.x, b.y-a.y)
		pos := 0.0
		for pos < l {
			run := math.Min(left, l-pos)
			p0 := point{a.x + (b.x-a.x)*pos/l, a.y + (b.y-a.y)*pos/l}
			p1 := point{a.x + (b.x-a.x)*(pos+run)/l, a.y + (b.y-a.y)*(pos+run)/l}
			if on {
				rs.segment(col, w, p0, p1)
			}
			pos += run
			left -= run
			if left <= 0 {
				on, left = !on, dash
			}
		}
	}
}

func (rs *rasterizer) face(size float64, isBold bool) (font.Face, error) {
	key := strconv.FormatFloat(size, 'f', 2, 64) + strconv.FormatBool(isBold)
	if f, ok := rs.faces[key]; ok {
		return f, nil
	}
	ft := regular
	if isBold {
		ft = bold
	}
	f, err := opentype.NewFace(ft, &opentype.FaceOptions{Size: size * rs.scale, DPI: 72, Hinting: font.HintingFull})
	if err != nil {
		return nil, fmt.Errorf("chart font face: %w", err)
	}
	rs.faces[key] = f
	return f, nil
}

func (rs *rasterizer) shape(s shape) error {
	switch s.kind {
	case kindRect:
		x0, y0, x1, y1 := s.pts[0].x, s.pts[0].y, s.pts[1].x, s.pts[1].y
		if s.fill != "" {
			rs.fillPath(s.fill, []point{{x0, y0}, {x1, y0}, {x1, y1}, {x0, y1}})
		}
		if s.stroke != "" {
			rs.stroke(s.stroke, s.width, s.dash, []point{{x0, y0}, {x1, y0}, {x1, y1}, {x0, y1}, {x0, y0}})
		}
	case kindLine:
		rs.stroke(s.stroke, s.width, s.dash, s.pts)
	case kindCircle:
		c := s.pts[0]
		if s.fill != "" {
			rs.fillPath(s.fill, circlePoly(c, s.r, false))
		}
		if s.stroke != "" {
			rs.fillPath(s.stroke, circlePoly(c, s.r+s.width/2, false), circlePoly(c, math.Max(s.r-s.width/2, 0), true))
		}
	case kindText:
		f, err := rs.face(s.size, s.bold)
		if err != nil {
			return err
		}
		d := &font.Drawer{Dst: rs.dst, Src: image.NewUniform(parseColour(s.fill)), Face: f}
		x := s.pts[0].x * rs.scale
		adv := float64(d.MeasureString(s.text)) / 64
		switch s.anchor {
		case anchorMiddle:
			x -= adv / 2
		case anchorEnd:
			x -= adv
		}
		d.Dot = fixed.Point26_6{X: fixed.Int26_6(x * 64), Y: fixed.Int26_6(s.pts[0].y * rs.scale * 64)}
		d.DrawString(s.text)
	}
	return nil
}
