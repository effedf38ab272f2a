package report

import (
	"bytes"
	"cmp"
	"fmt"
	"image/color"
	"math"
	"slices"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// sans is the face gonum measures text with. Liberation Sans has the
// metrics of Arial and Helvetica, so the generic family the SVG names
// instead (see inlineSVG) lays out the same; no font is embedded.
var sans = font.Font{Typeface: "Liberation", Variant: "Sans"}

const (
	tickSize   = 8
	labelSize  = 9
	legendSize = 8
)

// newPlot returns a plot whose text is set in sans, with compact money
// ticks on both axes.
func newPlot() *plot.Plot {
	p := plot.New()
	p.Title.TextStyle.Font = font.From(sans, 11)
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font = font.From(sans, labelSize)
		a.Tick.Label.Font = font.From(sans, tickSize)
		a.Tick.Marker = moneyTicks{}
		a.Padding = vg.Points(2)
	}
	return p
}

func newLegend() plot.Legend {
	l := plot.NewLegend()
	l.TextStyle.Font = font.From(sans, legendSize)
	l.Top, l.Left = true, true
	l.ThumbnailWidth = vg.Points(18)
	l.Padding = vg.Points(3)
	return l
}

// svgWithLegend draws p and, to its right, the legend, on a w×h canvas,
// and returns the SVG document.
func svgWithLegend(p *plot.Plot, leg plot.Legend, w, h vg.Length) ([]byte, error) {
	c := vgsvg.New(w, h)
	dc := draw.New(c)
	lw := leg.Rectangle(dc).Size().X + vg.Points(8)
	p.Draw(draw.Crop(dc, 0, -lw, 0, 0))
	leg.Draw(draw.Crop(dc, w-lw+vg.Points(6), 0, 0, -vg.Points(6)))
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// at interpolates ys over the increasing grid xs at x, linearly; outside
// the grid it returns the nearest end and beyond = true.
func at(xs, ys []float64, x float64) (y float64, beyond bool) {
	n := len(xs)
	if n == 0 {
		return math.NaN(), true
	}
	if x <= xs[0] {
		return ys[0], x < xs[0]
	}
	if x >= xs[n-1] {
		return ys[n-1], x > xs[n-1]
	}
	i, _ := slices.BinarySearch(xs, x)
	x0, x1 := xs[i-1], xs[i]
	f := (x - x0) / (x1 - x0)
	return ys[i-1] + f*(ys[i]-ys[i-1]), false
}

// finiteAll reports whether every value is a finite number.
func finiteAll(xs ...[]float64) bool {
	for _, s := range xs {
		for _, v := range s {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return false
			}
		}
	}
	return true
}

// curveChart draws one channel's horizon response: the median line, the
// 80% band of the draws, the spend range the data has seen, and markers at
// the current, proposed and approved spend.
func curveChart(cb CurveBand, horizon int, kpi string) ([]byte, error) {
	if len(cb.Spend) < 2 {
		return nil, fmt.Errorf("report: curve %q: needs at least two grid points, has %d", cb.Channel, len(cb.Spend))
	}
	if !finiteAll(cb.Spend, cb.P10, cb.P50, cb.P90, []float64{cb.SeenLow, cb.SeenHigh, cb.Current, cb.Proposed, cb.Approved}) {
		return nil, fmt.Errorf("report: curve %q: spend and response must be finite numbers", cb.Channel)
	}
	if !slices.IsSorted(cb.Spend) {
		return nil, fmt.Errorf("report: curve %q: the spend grid must increase", cb.Channel)
	}
	p := newPlot()
	p.X.Label.Text = "weekly spend"
	p.Y.Label.Text = fmt.Sprintf("extra %s over %s", kpi, plural(horizon, "week", "weeks"))
	p.X.Min, p.Y.Min = 0, 0

	n := len(cb.Spend)
	band := make(plotter.XYs, 0, 2*n)
	for i := range n {
		band = append(band, plotter.XY{X: cb.Spend[i], Y: cb.P90[i]})
	}
	for i := n - 1; i >= 0; i-- {
		band = append(band, plotter.XY{X: cb.Spend[i], Y: cb.P10[i]})
	}
	poly, err := plotter.NewPolygon(band)
	if err != nil {
		return nil, fmt.Errorf("report: curve %q: %w", cb.Channel, err)
	}
	poly.Color = bandFill
	poly.LineStyle.Width = 0

	mid := make(plotter.XYs, n)
	for i := range n {
		mid[i] = plotter.XY{X: cb.Spend[i], Y: cb.P50[i]}
	}
	line, err := plotter.NewLine(mid)
	if err != nil {
		return nil, fmt.Errorf("report: curve %q: %w", cb.Channel, err)
	}
	line.LineStyle = draw.LineStyle{Color: blue, Width: vg.Points(1.6)}

	point := func(x float64, g draw.GlyphStyle) *plotter.Scatter {
		y, _ := at(cb.Spend, cb.P50, x)
		s, _ := plotter.NewScatter(plotter.XYs{{X: x, Y: y}}) // finite, checked above
		s.GlyphStyle = g
		return s
	}
	cur, prop, appr := point(cb.Current, currentGlyph), point(cb.Proposed, proposedGlyph), point(cb.Approved, approvedGlyph)

	seen := seenRange{cb.SeenLow, cb.SeenHigh}
	p.Add(seen, gridLines{x: true, y: true}, poly, line, appr, prop, cur)
	// Below zero, a strip for the seen range, under the curve; no tick
	// there.
	p.Y.Min = -0.08 * p.Y.Max
	p.Y.Tick.Marker = nonNegative{moneyTicks{}}

	leg := newLegend()
	leg.Add("median of draws", line)
	leg.Add("80% of draws", poly)
	leg.Add("spend seen in data", seen)
	leg.Add("current", cur)
	leg.Add("proposed", prop)
	leg.Add("approved", appr)
	return svgWithLegend(p, leg, 6.4*vg.Inch, 2.6*vg.Inch)
}

// movesChart draws each channel's move on one row: a dashed black line
// from current to proposed, a solid vermillion line from current to
// approved, and the three markers.
func movesChart(names []string, current, proposed, approved []float64) ([]byte, error) {
	if !finiteAll(current, proposed, approved) {
		return nil, fmt.Errorf("report: moves: spend must be finite numbers")
	}
	p := newPlot()
	p.X.Label.Text = "weekly spend"
	p.X.Min = 0
	n := len(names)
	rev := slices.Clone(names)
	slices.Reverse(rev)
	p.NominalY(rev...) // first channel at the top
	p.Y.Tick.Label.Font = font.From(sans, labelSize)
	p.Y.Padding = vg.Points(10)
	p.Add(gridLines{x: true})

	propSty := draw.LineStyle{Color: black, Width: vg.Points(1.2), Dashes: []vg.Length{vg.Points(4), vg.Points(2.5)}}
	apprSty := draw.LineStyle{Color: vermillion, Width: vg.Points(3)}
	// The proposal runs just above the channel's row and the approved
	// plan just below, both from current spend, so that neither marker
	// hides the other when they fall on the same spend.
	const off = 0.17
	var legendProp, legendAppr *plotter.Line
	var cur, prop, appr plotter.XYs
	for k := range n {
		y := float64(n - 1 - k)
		lp, err := plotter.NewLine(plotter.XYs{{X: current[k], Y: y + off}, {X: proposed[k], Y: y + off}})
		if err != nil {
			return nil, fmt.Errorf("report: moves: %w", err)
		}
		lp.LineStyle = propSty
		la, err := plotter.NewLine(plotter.XYs{{X: current[k], Y: y - off}, {X: approved[k], Y: y - off}})
		if err != nil {
			return nil, fmt.Errorf("report: moves: %w", err)
		}
		la.LineStyle = apprSty
		tick, err := plotter.NewLine(plotter.XYs{{X: current[k], Y: y - off}, {X: current[k], Y: y + off}})
		if err != nil {
			return nil, fmt.Errorf("report: moves: %w", err)
		}
		tick.LineStyle = draw.LineStyle{Color: black, Width: vg.Points(0.8)}
		p.Add(tick, lp, la)
		legendProp, legendAppr = lp, la
		cur = append(cur, plotter.XY{X: current[k], Y: y})
		prop = append(prop, plotter.XY{X: proposed[k], Y: y + off})
		appr = append(appr, plotter.XY{X: approved[k], Y: y - off})
	}
	scatter := func(xy plotter.XYs, g draw.GlyphStyle) (*plotter.Scatter, error) {
		s, err := plotter.NewScatter(xy)
		if err != nil {
			return nil, fmt.Errorf("report: moves: %w", err)
		}
		s.GlyphStyle = g
		return s, nil
	}
	sc, err := scatter(cur, currentGlyph)
	if err != nil {
		return nil, err
	}
	sp, err := scatter(prop, proposedGlyph)
	if err != nil {
		return nil, err
	}
	sa, err := scatter(appr, approvedGlyph)
	if err != nil {
		return nil, err
	}
	p.Add(sp, sa, sc)

	leg := newLegend()
	leg.Add("current", sc)
	leg.Add("proposed", legendProp, sp)
	leg.Add("approved", legendAppr, sa)
	h := vg.Length(n)*0.27*vg.Inch + 0.6*vg.Inch
	return svgWithLegend(p, leg, 7*vg.Inch, h)
}

// gainBins bins gains with a round bin width so that zero is a bin edge:
// no bar mixes losses and gains. The number of bins follows the Rice rule,
// k = 2·n^(1/3) (Lane, Online Statistics Education, "Histograms"), between
// 10 and 40.
func gainBins(gains []float64) (edges, counts []float64) {
	lo, hi := slices.Min(gains), slices.Max(gains)
	if hi-lo < 1e-9*max(1, math.Abs(lo), math.Abs(hi)) {
		w := max(1, math.Abs(lo)/10)
		return []float64{lo - w, lo + w}, []float64{float64(len(gains))}
	}
	k := min(40, max(10, int(math.Ceil(2*math.Cbrt(float64(len(gains)))))))
	w := niceStep((hi - lo) / float64(k))
	start := math.Floor(lo/w) * w
	nb := int(math.Floor((hi-start)/w)) + 1
	edges = make([]float64, nb+1)
	for i := range edges {
		edges[i] = start + float64(i)*w
	}
	counts = make([]float64, nb)
	for _, g := range gains {
		i := min(nb-1, max(0, int(math.Floor((g-start)/w))))
		counts[i]++
	}
	return edges, counts
}

// niceStep rounds x up to 1, 2, 2.5 or 5 times a power of ten.
func niceStep(x float64) float64 {
	e := math.Pow(10, math.Floor(math.Log10(x)))
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if m*e >= x {
			return m * e
		}
	}
	return 10 * e
}

// gainChart draws the histogram of the approved plan's gain over the
// draws, with break-even, the downside quantile and the expected gain
// marked.
func gainChart(gains []float64, horizon int, downside, downsideLevel, expected float64) ([]byte, error) {
	if !finiteAll(gains, []float64{downside, expected}) {
		return nil, fmt.Errorf("report: gains must be finite numbers")
	}
	p := newPlot()
	p.X.Label.Text = fmt.Sprintf("gain of the approved plan over %s", plural(horizon, "week", "weeks"))
	p.Y.Label.Text = "number of draws"
	p.Y.Tick.Marker = countTicks{}
	edges, counts := gainBins(gains)
	losses, wins := bins{edges: edges, counts: counts, loss: true}, bins{edges: edges, counts: counts}
	zero := vline{0, draw.LineStyle{Color: black, Width: vg.Points(1.4)}}
	down := vline{downside, draw.LineStyle{Color: black, Width: vg.Points(1.2), Dashes: []vg.Length{vg.Points(4), vg.Points(2)}}}
	mean := vline{expected, draw.LineStyle{Color: black, Width: vg.Points(1.6), Dashes: []vg.Length{vg.Points(1), vg.Points(2)}}}
	p.Add(gridLines{y: true}, losses, zero, down, mean)
	p.Y.Max *= 1.08 // headroom above the tallest bar

	leg := newLegend()
	leg.Add("draws losing money", losses)
	leg.Add("draws gaining", wins)
	leg.Add("break-even (0)", zero)
	leg.Add(fmt.Sprintf("%s: %s", percentileName(downsideLevel), signedMoney(downside)), down)
	leg.Add("expected gain: "+signedMoney(expected), mean)
	return svgWithLegend(p, leg, 7*vg.Inch, 2.3*vg.Inch)
}

// holdoutChart draws the holdout weeks: the actual KPI against the
// forecast and its band.
func holdoutChart(h *Holdout, kpi string) ([]byte, error) {
	if len(h.Weeks) < 2 {
		return nil, fmt.Errorf("report: holdout: needs at least two weeks, has %d", len(h.Weeks))
	}
	if !finiteAll(h.Actual, h.Forecast, h.Low, h.High) {
		return nil, fmt.Errorf("report: holdout: values must be finite numbers")
	}
	p := newPlot()
	p.X.Label.Text = "holdout week"
	p.Y.Label.Text = "weekly " + kpi
	p.X.Tick.Marker = weekTicks(h.Weeks)
	p.Add(gridLines{y: true})
	n := len(h.Weeks)
	series := func(ys []float64) plotter.XYs {
		xy := make(plotter.XYs, n)
		for i := range n {
			xy[i] = plotter.XY{X: float64(i), Y: ys[i]}
		}
		return xy
	}
	var poly *plotter.Polygon
	if h.Low != nil {
		band := series(h.High)
		for i := n - 1; i >= 0; i-- {
			band = append(band, plotter.XY{X: float64(i), Y: h.Low[i]})
		}
		var err error
		if poly, err = plotter.NewPolygon(band); err != nil {
			return nil, fmt.Errorf("report: holdout: %w", err)
		}
		poly.Color = bandFill
		poly.LineStyle.Width = 0
		p.Add(poly)
	}
	fc, err := plotter.NewLine(series(h.Forecast))
	if err != nil {
		return nil, fmt.Errorf("report: holdout: %w", err)
	}
	fc.LineStyle = draw.LineStyle{Color: blue, Width: vg.Points(1.6), Dashes: []vg.Length{vg.Points(5), vg.Points(2.5)}}
	act, pts, err := plotter.NewLinePoints(series(h.Actual))
	if err != nil {
		return nil, fmt.Errorf("report: holdout: %w", err)
	}
	act.LineStyle = draw.LineStyle{Color: black, Width: vg.Points(1.2)}
	pts.GlyphStyle = draw.GlyphStyle{Color: black, Radius: vg.Points(2.5), Shape: marker{disc}}
	p.Add(fc, act, pts)
	leg := newLegend()
	leg.Add("actual", act, pts)
	leg.Add("forecast", fc)
	if poly != nil {
		leg.Add("forecast band", poly)
	}
	return svgWithLegend(p, leg, 7*vg.Inch, 2.0*vg.Inch)
}

// stackColours fill the contribution chart's layers: the base in light
// grey, then the Okabe–Ito colours in turn (Wong 2011), each layer also
// outlined in white so that neighbours stay apart in greyscale.
var stackColours = []color.NRGBA{
	{0xE6, 0x9F, 0x00, 0xff}, // orange
	{0x56, 0xB4, 0xE9, 0xff}, // sky blue
	{0x00, 0x9E, 0x73, 0xff}, // bluish green
	{0xF0, 0xE4, 0x42, 0xff}, // yellow
	{0x00, 0x72, 0xB2, 0xff}, // blue
	{0xD5, 0x5E, 0x00, 0xff}, // vermillion
	{0xCC, 0x79, 0xA7, 0xff}, // reddish purple
}

var baseFill = color.NRGBA{0xC8, 0xC8, 0xC8, 0xff}

// contributionChart stacks the base and each channel's fitted weekly KPI
// over the weeks of the data, with the actual KPI as a line on top.
func contributionChart(c *Contributions, kpi string) ([]byte, error) {
	n := len(c.Weeks)
	if !finiteAll(append([][]float64{c.Actual, c.Base}, c.Media...)...) {
		return nil, fmt.Errorf("report: contributions must be finite numbers")
	}
	p := newPlot()
	p.X.Label.Text = "week"
	p.Y.Label.Text = "weekly " + kpi
	p.X.Tick.Marker = weekTicks(c.Weeks)
	p.X.Min, p.X.Max = 0, float64(n-1)
	p.Add(gridLines{y: true})
	lower := make([]float64, n)
	upper := make([]float64, n)
	type entry struct {
		name string
		th   plot.Thumbnailer
	}
	var entries []entry
	layer := func(vals []float64, fill color.Color, name string) error {
		for t := range n {
			upper[t] = lower[t] + vals[t]
		}
		pts := make(plotter.XYs, 0, 2*n)
		for t := range n {
			pts = append(pts, plotter.XY{X: float64(t), Y: upper[t]})
		}
		for t := n - 1; t >= 0; t-- {
			pts = append(pts, plotter.XY{X: float64(t), Y: lower[t]})
		}
		poly, err := plotter.NewPolygon(pts)
		if err != nil {
			return fmt.Errorf("report: contributions: %w", err)
		}
		poly.Color = fill
		poly.LineStyle = draw.LineStyle{Color: white, Width: vg.Points(0.5)}
		p.Add(poly)
		entries = append(entries, entry{name, poly})
		copy(lower, upper)
		return nil
	}
	if err := layer(c.Base, baseFill, "base"); err != nil {
		return nil, err
	}
	for k, name := range c.Channels {
		if err := layer(c.Media[k], stackColours[k%len(stackColours)], name); err != nil {
			return nil, err
		}
	}
	act, err := plotter.NewLine(series(c.Actual))
	if err != nil {
		return nil, fmt.Errorf("report: contributions: %w", err)
	}
	act.LineStyle = draw.LineStyle{Color: black, Width: vg.Points(0.9)}
	p.Add(act)
	leg := newLegend()
	leg.Add("actual", act)
	// The legend lists the layers top down, as they are stacked.
	for i := len(entries) - 1; i >= 0; i-- {
		leg.Add(entries[i].name, entries[i].th)
	}
	return svgWithLegend(p, leg, 7*vg.Inch, 2.2*vg.Inch)
}

func series(ys []float64) plotter.XYs {
	xy := make(plotter.XYs, len(ys))
	for i, y := range ys {
		xy[i] = plotter.XY{X: float64(i), Y: y}
	}
	return xy
}

// fitChart draws the actual KPI against the fitted (base plus channels)
// and, below it on the same weeks, the residuals.
func fitChart(c *Contributions, kpi string) ([]byte, error) {
	n := len(c.Weeks)
	fitted := make([]float64, n)
	resid := make([]float64, n)
	for t := range n {
		f := c.Base[t]
		for k := range c.Channels {
			f += c.Media[k][t]
		}
		fitted[t], resid[t] = f, c.Actual[t]-f
	}
	if !finiteAll(fitted, c.Actual) {
		return nil, fmt.Errorf("report: fit: values must be finite numbers")
	}
	top := newPlot()
	top.Y.Label.Text = "weekly " + kpi
	top.X.Tick.Marker = weekTicks(c.Weeks)
	top.X.Min, top.X.Max = 0, float64(n-1)
	top.Add(gridLines{y: true})
	act, err := plotter.NewLine(series(c.Actual))
	if err != nil {
		return nil, fmt.Errorf("report: fit: %w", err)
	}
	act.LineStyle = draw.LineStyle{Color: black, Width: vg.Points(1)}
	fit, err := plotter.NewLine(series(fitted))
	if err != nil {
		return nil, fmt.Errorf("report: fit: %w", err)
	}
	fit.LineStyle = draw.LineStyle{Color: blue, Width: vg.Points(1.2), Dashes: []vg.Length{vg.Points(4), vg.Points(2)}}
	top.Add(act, fit)

	bot := newPlot()
	bot.X.Label.Text = "week"
	bot.Y.Label.Text = "residual"
	bot.X.Tick.Marker = weekTicks(c.Weeks)
	bot.X.Min, bot.X.Max = 0, float64(n-1)
	zero := hline{0, draw.LineStyle{Color: black, Width: vg.Points(0.8)}}
	stems := residualStems(resid)
	bot.Add(gridLines{y: true}, stems, zero)

	leg := newLegend()
	leg.Add("actual", act)
	leg.Add("fitted", fit)
	leg.Add("residual", stems)

	w, h := 7*vg.Inch, 2.9*vg.Inch
	cv := vgsvg.New(w, h)
	dc := draw.New(cv)
	lw := leg.Rectangle(dc).Size().X + vg.Points(8)
	plots := [][]*plot.Plot{{top}, {bot}}
	tiles := draw.Tiles{Rows: 2, Cols: 1, PadY: vg.Points(4)}
	area := draw.Crop(dc, 0, -lw, 0, 0)
	canvases := plot.Align(plots, tiles, area) // same x axis width in both panels
	top.Draw(canvases[0][0])
	bot.Draw(canvases[1][0])
	leg.Draw(draw.Crop(dc, w-lw+vg.Points(6), 0, 0, -vg.Points(6)))
	var buf bytes.Buffer
	if _, err := cv.WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// deciderGlyphs: the raw proposal keeps the brief's proposal marker (an
// orange triangle), since it is the proposal; each policy takes a shape
// and colour the brief does not use (the black disc is current spend
// there, the vermillion cross the approved plan), so a marker means one
// thing on every page.
var deciderGlyphs = []draw.GlyphStyle{
	proposedGlyph,
	{Color: blue, Radius: vg.Points(4), Shape: marker{square}},
	{Color: bluishGreen, Radius: vg.Points(4.5), Shape: marker{diamond}},
	{Color: purple, Radius: vg.Points(4), Shape: marker{ring}},
	{Color: skyBlue, Radius: vg.Points(4), Shape: marker{square}},
}

func glyphFor(i int) draw.GlyphStyle { return deciderGlyphs[i%len(deciderGlyphs)] }

// shareTicks label an axis of shares as percentages.
type shareTicks struct{}

func (shareTicks) Ticks(lo, hi float64) []plot.Tick {
	ts := plot.DefaultTicks{}.Ticks(lo, hi)
	for i := range ts {
		if ts[i].Label != "" {
			ts[i].Label = pct(ts[i].Value)
		}
	}
	return ts
}

// tradeoffChart puts each decider at (share of the oracle's gain, chance of
// a loss), labelled by name. It returns nil when no summary is finite.
func tradeoffChart(ds []decider) ([]byte, error) {
	p := newPlot()
	p.X.Label.Text = "share of the oracle's gain captured"
	p.Y.Label.Text = "chance of a losing decision"
	p.X.Tick.Marker, p.Y.Tick.Marker = nonNegative{shareTicks{}}, nonNegative{shareTicks{}}
	p.Y.Min, p.Y.Max = 0, 0.05
	p.X.Min, p.X.Max = 0, 0.05
	p.Add(gridLines{x: true, y: true})
	leg := newLegend()
	var pts plotter.XYs
	var names []string
	for i, d := range ds {
		x, y := d.sum.OracleShare, d.sum.PLoss
		if !finiteAll([]float64{x, y}) {
			continue
		}
		s, err := plotter.NewScatter(plotter.XYs{{X: x, Y: y}})
		if err != nil {
			return nil, fmt.Errorf("report: trade-off: %w", err)
		}
		s.GlyphStyle = glyphFor(i)
		p.Add(s)
		leg.Add(d.name, s)
		pts = append(pts, plotter.XY{X: x, Y: y})
		names = append(names, d.name)
		p.X.Min, p.X.Max = min(p.X.Min, x), max(p.X.Max, x)
		p.Y.Max = max(p.Y.Max, y)
	}
	if len(pts) == 0 {
		return nil, nil
	}
	// Neighbours in x take turns above and below their marker, so that
	// close markers' labels do not run into each other.
	order := make([]int, len(pts))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(pts[a].X, pts[b].X) })
	for rank, i := range order {
		l, err := plotter.NewLabels(plotter.XYLabels{XYs: pts[i : i+1], Labels: names[i : i+1]})
		if err != nil {
			return nil, fmt.Errorf("report: trade-off: %w", err)
		}
		l.TextStyle[0].Font = font.From(sans, legendSize)
		l.Offset = vg.Point{X: vg.Points(7), Y: vg.Points(4)}
		if rank%2 == 1 {
			l.Offset.Y = -vg.Points(12)
		}
		p.Add(l)
	}
	// Room for the labels right of the markers and above the highest,
	// and below 0% and left of 0%, so that a decider that never loses, or
	// captures nothing, is drawn clear of the axes rather than on them.
	span := p.X.Max - p.X.Min
	p.X.Max += 0.35 * span
	p.X.Min -= 0.04 * span
	p.Y.Max *= 1.15
	p.Y.Min = -0.08 * p.Y.Max
	return svgWithLegend(p, leg, 7*vg.Inch, 3.2*vg.Inch)
}

// gainsChart draws one horizontal box plot of the true gains per decider,
// first decider at the top, with zero marked. It returns nil when no
// decider has a gain.
func gainsChart(ds []decider, horizon int) ([]byte, error) {
	p := newPlot()
	p.X.Label.Text = fmt.Sprintf("true gain over %s", plural(horizon, "week", "weeks"))
	n := len(ds)
	names := make([]string, n)
	drawn := false
	var bars []plot.Plotter // drawn over the break-even line
	for i, d := range ds {
		names[n-1-i] = d.name
		if len(d.gains) == 0 {
			continue
		}
		if !finiteAll(d.gains) {
			return nil, fmt.Errorf("report: gains of %s must be finite numbers", d.name)
		}
		b, err := plotter.NewBoxPlot(vg.Points(16), float64(n-1-i), plotter.Values(d.gains))
		if err != nil {
			return nil, fmt.Errorf("report: gains of %s: %w", d.name, err)
		}
		b.Horizontal = true
		// A tinted box with a black outline: visible on white and in
		// greyscale; the names on the axis tell the boxes apart.
		b.FillColor = bandFill
		b.BoxStyle = draw.LineStyle{Color: black, Width: vg.Points(1.2)}
		b.MedianStyle = draw.LineStyle{Color: black, Width: vg.Points(2.4)}
		b.WhiskerStyle = draw.LineStyle{Color: black, Width: vg.Points(0.8)}
		b.GlyphStyle = draw.GlyphStyle{Color: black, Radius: vg.Points(2), Shape: draw.RingGlyph{}}
		p.Add(b)
		if slices.Min(d.gains) == slices.Max(d.gains) {
			// Every world gave the same gain (a policy that refused them
			// all gains 0 everywhere): the box has no width, so a bar
			// marks the value.
			bars = append(bars, pointBar{x: d.gains[0], y: float64(n - 1 - i)})
		}
		drawn = true
	}
	if !drawn {
		return nil, nil
	}
	p.NominalY(names...)
	p.Y.Tick.Label.Font = font.From(sans, labelSize)
	p.Y.Padding = vg.Points(10)
	p.X.Min, p.X.Max = math.Min(p.X.Min, 0), math.Max(p.X.Max, 0)
	zero := vline{0, draw.LineStyle{Color: black, Width: vg.Points(1.4)}}
	p.Add(gridLines{x: true}, zero)
	p.Add(bars...)
	leg := newLegend()
	leg.Add("break-even (0)", zero)
	leg.Add("middle half of worlds", boxThumb{})
	if len(bars) > 0 {
		leg.Add("every world the same", pointBar{})
	}
	h := vg.Length(n)*0.45*vg.Inch + 0.8*vg.Inch
	return svgWithLegend(p, leg, 7*vg.Inch, h)
}

// pointBar is a short thick vertical bar at (x, y): a distribution with no
// spread, in the box plot's row.
type pointBar struct{ x, y float64 }

func (b pointBar) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	b.draw(&c, vg.Point{X: trX(b.x), Y: trY(b.y)})
}

// draw a 7×18 point bar centred on pt (no taller than the canvas): grey,
// outlined in black, wider than the break-even line it may sit on.
func (pointBar) draw(c *draw.Canvas, pt vg.Point) {
	w, h := vg.Points(3.5), min(vg.Points(9), (c.Max.Y-c.Min.Y)/2)
	pts := []vg.Point{{X: pt.X - w, Y: pt.Y - h}, {X: pt.X + w, Y: pt.Y - h}, {X: pt.X + w, Y: pt.Y + h}, {X: pt.X - w, Y: pt.Y + h}}
	c.FillPolygon(seenHatch, pts)
	c.StrokeLines(draw.LineStyle{Color: black, Width: vg.Points(1.2)}, append(pts, pts[0]))
}

func (b pointBar) Thumbnail(c *draw.Canvas) {
	b.draw(c, vg.Point{X: (c.Min.X + c.Max.X) / 2, Y: (c.Min.Y + c.Max.Y) / 2})
}

func (b pointBar) DataRange() (xmin, xmax, ymin, ymax float64) { return b.x, b.x, b.y, b.y }

// boxThumb is the legend's picture of a box.
type boxThumb struct{}

func (boxThumb) Thumbnail(c *draw.Canvas) {
	r := c.Rectangle
	inset := (r.Max.Y - r.Min.Y) / 6
	r.Min.Y, r.Max.Y = r.Min.Y+inset, r.Max.Y-inset
	pts := []vg.Point{r.Min, {X: r.Max.X, Y: r.Min.Y}, r.Max, {X: r.Min.X, Y: r.Max.Y}}
	c.FillPolygon(bandFill, pts)
	c.StrokeLines(draw.LineStyle{Color: black, Width: vg.Points(1.2)}, append(pts, r.Min))
}
