package report

import (
	"fmt"
	"html/template"
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// EffectPath is a drifting (or seasonal) channel's effectiveness in every
// week of the data, with its 90% bootstrap band, as the decision's
// effectiveness evidence estimated it (validation.EffectChannel's path).
// Units do not matter: the chart shows each week's effectiveness over the
// path's mean. Change, Low and High are the last week's effectiveness over
// the history average and its 90% interval; for a seasonal channel
// (SeasonWeeks > 0) the next SeasonWeeks weeks' effectiveness over the
// yearly average.
type EffectPath struct {
	SeasonWeeks int       `json:"season_weeks,omitempty"`
	Channel     string    `json:"channel"`
	Weeks       []string  `json:"weeks"`
	Path        []float64 `json:"path"`
	PathLow     []float64 `json:"path_low"`
	PathHigh    []float64 `json:"path_high"`
	Change      float64   `json:"change"`
	Low         float64   `json:"low"`
	High        float64   `json:"high"`
}

// effectChart draws each drifting channel's effectiveness over the weeks
// of the data relative to its history average (1 = the average), with its
// 90% band, and the history average as a thin grey line.
func effectChart(paths []EffectPath) ([]byte, error) {
	if len(paths) == 0 {
		return nil, fmt.Errorf("report: effectiveness: no channel")
	}
	weeks := paths[0].Weeks
	n := len(weeks)
	if n < 2 {
		return nil, fmt.Errorf("report: effectiveness: needs at least two weeks, has %d", n)
	}
	p := newPlot()
	p.X.Label.Text = "week"
	p.Y.Label.Text = "over history average"
	p.X.Tick.Marker = weekTicks(weeks)
	p.Y.Tick.Marker = plot.DefaultTicks{} // a ratio, not money
	p.Add(gridLines{y: true})
	leg := newLegend()
	// The drifting channels in turn (Okabe–Ito colours, as elsewhere in
	// the brief), each with its own dash so they stay apart in greyscale,
	// its band the same colour at a quarter opacity.
	styles := []draw.LineStyle{
		{Color: blue, Width: vg.Points(1.6)},
		{Color: vermillion, Width: vg.Points(1.6), Dashes: []vg.Length{vg.Points(5), vg.Points(2.5)}},
		{Color: bluishGreen, Width: vg.Points(1.6), Dashes: []vg.Length{vg.Points(1.5), vg.Points(2)}},
	}
	fills := []color.NRGBA{{0x00, 0x72, 0xB2, 0x40}, {0xD5, 0x5E, 0x00, 0x40}, {0x00, 0x9E, 0x73, 0x40}}
	for i, e := range paths {
		if len(e.Weeks) != n || len(e.Path) != n || len(e.PathLow) != n || len(e.PathHigh) != n {
			return nil, fmt.Errorf("report: effectiveness: %s: %d weeks, %d, %d and %d path values; want %d each", e.Channel, len(e.Weeks), len(e.Path), len(e.PathLow), len(e.PathHigh), n)
		}
		if !finiteAll(e.Path, e.PathLow, e.PathHigh) {
			return nil, fmt.Errorf("report: effectiveness: %s: values must be finite numbers", e.Channel)
		}
		var m float64
		for _, v := range e.Path {
			m += v
		}
		m /= float64(n)
		if !(m > 0) {
			return nil, fmt.Errorf("report: effectiveness: %s: the path's average %g is not positive", e.Channel, m)
		}
		band := make(plotter.XYs, 0, 2*n)
		line := make(plotter.XYs, n)
		for t := range n {
			band = append(band, plotter.XY{X: float64(t), Y: e.PathHigh[t] / m})
			line[t] = plotter.XY{X: float64(t), Y: e.Path[t] / m}
		}
		for t := n - 1; t >= 0; t-- {
			band = append(band, plotter.XY{X: float64(t), Y: e.PathLow[t] / m})
		}
		poly, err := plotter.NewPolygon(band)
		if err != nil {
			return nil, fmt.Errorf("report: effectiveness: %w", err)
		}
		st := styles[i%len(styles)]
		poly.Color = fills[i%len(fills)]
		poly.LineStyle.Width = 0
		l, err := plotter.NewLine(line)
		if err != nil {
			return nil, fmt.Errorf("report: effectiveness: %w", err)
		}
		l.LineStyle = st
		p.Add(poly, l)
		leg.Add(e.Channel, l)
		leg.Add(e.Channel+" 90% band", poly)
	}
	avg, err := plotter.NewLine(plotter.XYs{{X: 0, Y: 1}, {X: float64(n - 1), Y: 1}})
	if err != nil {
		return nil, fmt.Errorf("report: effectiveness: %w", err)
	}
	avg.LineStyle = draw.LineStyle{Color: seenHatch, Width: vg.Points(0.8)}
	p.Add(avg)
	leg.Add("history average", avg)
	return svgWithLegend(p, leg, 7*vg.Inch, 2.0*vg.Inch)
}

// effectCaption says, per drifting channel, how its effectiveness in the
// last week compares with its history average.
func effectCaption(paths []EffectPath) string {
	var parts []string
	seasonal := false
	for _, e := range paths {
		dir := "above"
		if e.Change < 1 {
			dir = "below"
		}
		when, against := "in the last week", "its history average"
		if e.SeasonWeeks > 0 {
			when, against, seasonal = fmt.Sprintf("over the next %d weeks", e.SeasonWeeks), "its yearly average", true
		}
		parts = append(parts, fmt.Sprintf("%s's effectiveness %s is %s %s %s (90%% interval %s to %s)",
			e.Channel, when, pct(math.Round(math.Abs(e.Change-1)*1000)/1000), dir, against, changePct(e.Low-1), changePct(e.High-1)))
	}
	uses := "The decision uses each channel's effectiveness at the end of the data, not its average over the past, which is why it can differ from last year's figures."
	if seasonal {
		uses = "The decision uses each channel's effectiveness in the season of the weeks it plans, not its average over the year, which is why it can differ from last year's figures."
	}
	return strings.Join(parts, "; ") + ". " + uses + " The band is the 90% range of the effectiveness over bootstrap refits; a wide band near the end means the current level is uncertain."
}

func changePct(x float64) string {
	s := pct(math.Round(math.Abs(x)*1000) / 1000)
	if x < 0 {
		return "−" + s
	}
	return "+" + s
}

// effect adds the effectiveness-over-time chart when some channel drifts.
func (v *view) effect(paths []EffectPath) error {
	if len(paths) == 0 {
		return nil
	}
	doc, err := effectChart(paths)
	if err != nil {
		return err
	}
	v.EffectCaption = effectCaption(paths)
	var svg template.HTML
	if svg, err = inlineSVG(doc, "chart-effect", "Effectiveness over time. "+v.EffectCaption); err != nil {
		return err
	}
	v.EffectChart = svg
	return nil
}
