package report

import (
	"image/color"
	"math"
	"slices"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The Okabe–Ito palette (Okabe & Ito 2008, "Color Universal Design"; the
// hex values as printed by Wong 2011, Nature Methods 8:441): its colours
// stay apart under protanopia, deuteranopia and tritanopia. Every series
// also differs by shape, dash or hatching, for greyscale prints.
var (
	black       = color.NRGBA{0x00, 0x00, 0x00, 0xff}
	orange      = color.NRGBA{0xE6, 0x9F, 0x00, 0xff}
	blue        = color.NRGBA{0x00, 0x72, 0xB2, 0xff}
	vermillion  = color.NRGBA{0xD5, 0x5E, 0x00, 0xff}
	white       = color.NRGBA{0xff, 0xff, 0xff, 0xff}
	bandFill    = color.NRGBA{0x56, 0xB4, 0xE9, 0x66} // sky blue, 40% opaque
	skyBlue     = color.NRGBA{0x56, 0xB4, 0xE9, 0xff}
	bluishGreen = color.NRGBA{0x00, 0x9E, 0x73, 0xff}
	purple      = color.NRGBA{0xCC, 0x79, 0xA7, 0xff} // reddish purple
	seenFill    = color.NRGBA{0xEE, 0xEE, 0xEE, 0xff}
	seenHatch   = color.NRGBA{0x76, 0x76, 0x76, 0xff}
	gridColour  = color.NRGBA{0xDD, 0xDD, 0xDD, 0xff}
	lossHatch   = color.NRGBA{0x00, 0x00, 0x00, 0xff}
	hatchGap    = vg.Points(4)
	hatchWidth  = vg.Points(0.6)
	markerWidth = vg.Points(2)
)

// The three positions of a move, always drawn the same way, in the brief
// and on the rehearsal page: current spend a small black disc, the
// proposal a large orange triangle outlined in black (orange alone is too
// light against white for WCAG 2.1's 3:1 for graphics), the approved plan
// a vermillion cross. They are drawn largest first (triangle, cross,
// disc), so that where two fall on the same spend both stay visible: the
// triangle's corners reach past the cross, the cross's arms past the disc.
var (
	currentGlyph  = draw.GlyphStyle{Color: black, Radius: vg.Points(2.6), Shape: marker{disc}}
	proposedGlyph = draw.GlyphStyle{Color: orange, Radius: vg.Points(5.5), Shape: marker{triangle}}
	approvedGlyph = draw.GlyphStyle{Color: vermillion, Radius: vg.Points(4.5), Shape: marker{cross}}
)

type shape int

const (
	disc shape = iota
	triangle
	cross
	square
	diamond
	ring
)

// marker is a glyph with a white halo, so it reads on top of lines and
// bands.
type marker struct{ shape shape }

func (m marker) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	halo := sty
	halo.Color = white
	switch m.shape {
	case cross:
		m.cross(c, halo.Color, sty.Radius, markerWidth+vg.Points(2.4), pt)
		m.cross(c, sty.Color, sty.Radius, markerWidth, pt)
	case triangle:
		halo.Radius += vg.Points(1.5)
		c.SetColor(white)
		draw.PyramidGlyph{}.DrawGlyph(c, halo, pt)
		c.SetColor(sty.Color)
		draw.PyramidGlyph{}.DrawGlyph(c, sty, pt)
		r := sty.Radius + sty.Radius/4 // PyramidGlyph's circumradius
		c.StrokeLines(draw.LineStyle{Color: black, Width: vg.Points(0.8)}, []vg.Point{
			{X: pt.X, Y: pt.Y + r},
			{X: pt.X - r*0.8660254, Y: pt.Y - r/2},
			{X: pt.X + r*0.8660254, Y: pt.Y - r/2},
			{X: pt.X, Y: pt.Y + r},
		})
	case square, diamond, ring:
		r := sty.Radius
		var pts []vg.Point
		if m.shape == diamond {
			pts = []vg.Point{{X: pt.X, Y: pt.Y + r*1.2}, {X: pt.X + r, Y: pt.Y}, {X: pt.X, Y: pt.Y - r*1.2}, {X: pt.X - r, Y: pt.Y}}
		} else {
			pts = []vg.Point{{X: pt.X - r, Y: pt.Y - r}, {X: pt.X + r, Y: pt.Y - r}, {X: pt.X + r, Y: pt.Y + r}, {X: pt.X - r, Y: pt.Y + r}}
		}
		if m.shape == ring {
			c.StrokeLines(draw.LineStyle{Color: white, Width: vg.Points(4)}, circle(pt, r))
			c.StrokeLines(draw.LineStyle{Color: sty.Color, Width: vg.Points(2)}, circle(pt, r))
			return
		}
		c.StrokeLines(draw.LineStyle{Color: white, Width: vg.Points(2.4)}, append(pts, pts[0]))
		c.FillPolygon(sty.Color, pts)
		c.StrokeLines(draw.LineStyle{Color: black, Width: vg.Points(0.8)}, append(pts, pts[0]))
	default:
		halo.Radius += vg.Points(0.8)
		c.SetColor(white)
		draw.CircleGlyph{}.DrawGlyph(c, halo, pt)
		c.SetColor(sty.Color)
		draw.CircleGlyph{}.DrawGlyph(c, sty, pt)
	}
}

// circle approximates a circle of radius r around pt by 24 segments.
func circle(pt vg.Point, r vg.Length) []vg.Point {
	pts := make([]vg.Point, 25)
	for i := range pts {
		a := 2 * math.Pi * float64(i) / 24
		pts[i] = vg.Point{X: pt.X + r*vg.Length(math.Cos(a)), Y: pt.Y + r*vg.Length(math.Sin(a))}
	}
	return pts
}

func (marker) cross(c *draw.Canvas, clr color.Color, radius, width vg.Length, pt vg.Point) {
	r := radius * 0.8
	sty := draw.LineStyle{Color: clr, Width: width}
	c.StrokeLine2(sty, pt.X-r, pt.Y-r, pt.X+r, pt.Y+r)
	c.StrokeLine2(sty, pt.X-r, pt.Y+r, pt.X+r, pt.Y-r)
}

// hatch strokes 45° lines spaced gap apart inside the rectangle r.
func hatch(c *draw.Canvas, r vg.Rectangle, sty draw.LineStyle, gap vg.Length) {
	w, h := r.Max.X-r.Min.X, r.Max.Y-r.Min.Y
	if w <= 0 || h <= 0 {
		return
	}
	// Lines x = Min.X + d + t, y = Min.Y + t for t in [0, h], clipped to
	// x in [Min.X, Max.X]; d on a fixed lattice so neighbouring
	// rectangles' hatches line up.
	start := vg.Length(math.Floor(float64((r.Min.X-h)/gap))) * gap
	for x := start; x < r.Max.X; x += gap {
		d := x - r.Min.X
		t0, t1 := max(0, -d), min(h, w-d)
		if t0 >= t1 {
			continue
		}
		c.StrokeLine2(sty, r.Min.X+d+t0, r.Min.Y+t0, r.Min.X+d+t1, r.Min.Y+t1)
	}
}

// seenRange marks, with a light fill and a grey hatch, the weekly spend
// the data has seen: a strip along the bottom of the plot, below the
// curve it describes, so that the hatch never runs over the curve or its
// band (the chart's y axis starts below zero to make room for it).
type seenRange struct{ low, high float64 }

func (s seenRange) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	lo := max(c.Min.X, trX(max(s.low, p.X.Min)))
	hi := min(c.Max.X, trX(min(s.high, p.X.Max)))
	top := min(c.Max.Y, trY(0)-vg.Points(1.5))
	if hi <= lo || top <= c.Min.Y {
		return
	}
	r := vg.Rectangle{Min: vg.Point{X: lo, Y: c.Min.Y}, Max: vg.Point{X: hi, Y: top}}
	s.draw(&c, r)
}

// nonNegative keeps a tick marker's ticks at zero and above.
type nonNegative struct{ plot.Ticker }

func (n nonNegative) Ticks(lo, hi float64) []plot.Tick {
	var out []plot.Tick
	for _, t := range n.Ticker.Ticks(lo, hi) {
		if t.Value >= 0 {
			out = append(out, t)
		}
	}
	return out
}

func (s seenRange) draw(c *draw.Canvas, r vg.Rectangle) {
	c.FillPolygon(seenFill, []vg.Point{r.Min, {X: r.Max.X, Y: r.Min.Y}, r.Max, {X: r.Min.X, Y: r.Max.Y}})
	hatch(c, r, draw.LineStyle{Color: seenHatch, Width: hatchWidth}, hatchGap)
}

func (s seenRange) Thumbnail(c *draw.Canvas) { s.draw(c, c.Rectangle) }

// DataRange keeps the seen range in view along x and leaves y alone.
func (s seenRange) DataRange() (xmin, xmax, ymin, ymax float64) {
	return s.low, s.high, math.Inf(1), math.Inf(-1)
}

// vline is a vertical line across the plot at x, on a white halo so that
// it reads on top of bars of any colour.
type vline struct {
	x   float64
	sty draw.LineStyle
}

func (l vline) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	x := trX(l.x)
	if x < c.Min.X || x > c.Max.X {
		return
	}
	c.StrokeLine2(draw.LineStyle{Color: white, Width: l.sty.Width + vg.Points(2)}, x, c.Min.Y, x, c.Max.Y)
	c.StrokeLine2(l.sty, x, c.Min.Y, x, c.Max.Y)
}

func (l vline) Thumbnail(c *draw.Canvas) {
	y := (c.Min.Y + c.Max.Y) / 2
	c.StrokeLine2(l.sty, c.Min.X, y, c.Max.X, y)
}

func (l vline) DataRange() (xmin, xmax, ymin, ymax float64) {
	return l.x, l.x, math.Inf(1), math.Inf(-1)
}

// bins is a histogram whose bins that lie below zero are drawn in
// vermillion and hatched (losses), the others in blue (gains).
type bins struct {
	edges  []float64 // len(counts)+1, increasing
	counts []float64
	loss   bool // Thumbnail draws the loss style
}

func (b bins) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	for i, n := range b.counts {
		if n == 0 {
			continue
		}
		r := vg.Rectangle{
			Min: vg.Point{X: trX(b.edges[i]), Y: trY(0)},
			Max: vg.Point{X: trX(b.edges[i+1]), Y: trY(n)},
		}
		drawBar(&c, r, b.edges[i+1] <= 0)
	}
}

func drawBar(c *draw.Canvas, r vg.Rectangle, loss bool) {
	pts := []vg.Point{r.Min, {X: r.Max.X, Y: r.Min.Y}, r.Max, {X: r.Min.X, Y: r.Max.Y}}
	fill := blue
	if loss {
		fill = vermillion
	}
	c.FillPolygon(fill, pts)
	if loss {
		hatch(c, r, draw.LineStyle{Color: lossHatch, Width: hatchWidth}, hatchGap)
	}
	c.StrokeLines(draw.LineStyle{Color: white, Width: vg.Points(0.5)}, append(pts, r.Min))
}

func (b bins) Thumbnail(c *draw.Canvas) { drawBar(c, c.Rectangle, b.loss) }

func (b bins) DataRange() (xmin, xmax, ymin, ymax float64) {
	ymax = 0
	for _, n := range b.counts {
		ymax = max(ymax, n)
	}
	return b.edges[0], b.edges[len(b.edges)-1], 0, ymax
}

// moneyTicks are gonum's default tick positions, labelled compactly (20k,
// 1.5M) so that large currency amounts fit.
type moneyTicks struct{}

func (moneyTicks) Ticks(lo, hi float64) []plot.Tick {
	ts := plot.DefaultTicks{}.Ticks(lo, hi)
	for i := range ts {
		if ts[i].Label != "" {
			ts[i].Label = compact(ts[i].Value)
		}
	}
	return ts
}

// countTicks label a count axis with whole numbers only: gonum's default
// positions, without those that are not integers (a count of 2.5 draws
// means nothing), and with a step of at least 1.
type countTicks struct{}

func (countTicks) Ticks(lo, hi float64) []plot.Tick {
	var out []plot.Tick
	for _, t := range (plot.DefaultTicks{}).Ticks(lo, hi) {
		if t.Value != math.Trunc(t.Value) {
			continue
		}
		if t.Label != "" {
			t.Label = strconv.FormatFloat(t.Value, 'f', 0, 64)
		}
		out = append(out, t)
	}
	if len(out) == 0 || !slices.ContainsFunc(out, func(t plot.Tick) bool { return t.Label != "" }) {
		// A range under one: label its whole ends.
		for v := math.Ceil(lo); v <= math.Floor(hi); v++ {
			out = append(out, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'f', 0, 64)})
		}
	}
	return out
}

// hline is a horizontal line across the plot at y.
type hline struct {
	y   float64
	sty draw.LineStyle
}

func (l hline) Plot(c draw.Canvas, p *plot.Plot) {
	_, trY := p.Transforms(&c)
	y := trY(l.y)
	if y < c.Min.Y || y > c.Max.Y {
		return
	}
	c.StrokeLine2(l.sty, c.Min.X, y, c.Max.X, y)
}

func (l hline) DataRange() (xmin, xmax, ymin, ymax float64) {
	return math.Inf(1), math.Inf(-1), l.y, l.y
}

// residualStems draws each week's residual as a thin vertical stem from
// zero, so that runs on one side of zero show.
type residualStems []float64

func (r residualStems) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	sty := draw.LineStyle{Color: blue, Width: vg.Points(1)}
	for t, v := range r {
		c.StrokeLine2(sty, trX(float64(t)), trY(0), trX(float64(t)), trY(v))
	}
}

func (r residualStems) Thumbnail(c *draw.Canvas) {
	x := (c.Min.X + c.Max.X) / 2
	c.StrokeLine2(draw.LineStyle{Color: blue, Width: vg.Points(1)}, x, c.Min.Y, x, c.Max.Y)
}

func (r residualStems) DataRange() (xmin, xmax, ymin, ymax float64) {
	ymin, ymax = 0, 0
	for _, v := range r {
		ymin, ymax = min(ymin, v), max(ymax, v)
	}
	return 0, float64(len(r) - 1), ymin, ymax
}

// weekTicks label about six of the holdout weeks, indexed from 0.
type weekTicks []string

func (w weekTicks) Ticks(lo, hi float64) []plot.Tick {
	step := max(1, (len(w)+5)/6)
	var ts []plot.Tick
	for i := 0; i < len(w); i += step {
		ts = append(ts, plot.Tick{Value: float64(i), Label: w[i]})
	}
	return ts
}

// gridLines draws light vertical and horizontal lines at the major ticks.
type gridLines struct{ x, y bool }

func (g gridLines) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	sty := draw.LineStyle{Color: gridColour, Width: vg.Points(0.5)}
	if g.x {
		for _, t := range p.X.Tick.Marker.Ticks(p.X.Min, p.X.Max) {
			if t.Label == "" || t.Value < p.X.Min || t.Value > p.X.Max {
				continue
			}
			x := trX(t.Value)
			c.StrokeLine2(sty, x, c.Min.Y, x, c.Max.Y)
		}
	}
	if g.y {
		for _, t := range p.Y.Tick.Marker.Ticks(p.Y.Min, p.Y.Max) {
			if t.Label == "" || t.Value < p.Y.Min || t.Value > p.Y.Max {
				continue
			}
			y := trY(t.Value)
			c.StrokeLine2(sty, c.Min.X, y, c.Max.X, y)
		}
	}
}
