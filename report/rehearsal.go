package report

import (
	"bytes"
	"cmp"
	"errors"
	"fmt"
	"html/template"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"sluice/internal/atomicfile"
	"sluice/record"
	"sluice/rehearsal"
)

// ErrNoRehearsal is returned when there is no rehearsal to render.
var ErrNoRehearsal = errors.New("report: no rehearsal result")

// RenderRehearsal writes the rehearsal page for r to w: what was
// simulated, each way of deciding summed up over the worlds, the trade-off
// between protection and captured gain, the spread of true gains and the
// results by kind of world. Nothing is written when an error is returned.
func RenderRehearsal(w io.Writer, r *rehearsal.Result) error {
	if r == nil {
		return ErrNoRehearsal
	}
	decided := 0
	for _, o := range r.Worlds {
		if o.Err == "" {
			decided++
		}
	}
	if decided == 0 {
		return fmt.Errorf("report: no world of the rehearsal was decided (%d failed); a page would summarize nothing", len(r.Worlds))
	}
	v, err := newRehearsalView(r)
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := rehearsalTemplate.Execute(&buf, v); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	_, err = buf.WriteTo(w)
	return err
}

// WriteRehearsal renders the rehearsal page into the file at path,
// atomically; on error the file is left as it was.
func WriteRehearsal(path string, r *rehearsal.Result) error {
	var buf bytes.Buffer
	if err := RenderRehearsal(&buf, r); err != nil {
		return err
	}
	return atomicfile.Write(path, buf.Bytes(), 0o644)
}

type rehearsalView struct {
	Title, Intro, Caution string
	Facts                 []string
	Summary               []summaryRow
	TradeoffChart         template.HTML // "" when there is nothing to draw
	TradeoffCaption       string
	GainsChart            template.HTML
	GainsCaption          string
	Deciders              []string // column groups of the kind table
	Kinds                 []kindRow
	Errors                string
	Failures              []string // per stage: count and the first reasons
	CheckKinds            []string // misspecified kinds with a power column
	CheckRows             []checkRow
	Loud                  string // a warning when more than a tenth of the worlds failed
}

type summaryRow struct {
	Name, Worlds, PLoss, Mean, P05, Oracle, Refused string
}

// checkRow is one check's stated and realised false-alarm rate and power.
type checkRow struct {
	Name, Stated, Realised string
	Power                  []string // per CheckKinds
}

type kindRow struct {
	Kind, Worlds, Failed string
	Cells                []string // P(loss), of oracle, per decider
}

// decider is one way of deciding: the raw proposal or a policy.
type decider struct {
	name  string
	sum   *rehearsal.Summary
	gains []float64 // true gain in each world that could be decided
}

func deciders(r *rehearsal.Result) []decider {
	ds := []decider{{name: "raw proposal", sum: &r.Raw}}
	for i := range r.Policies {
		ds = append(ds, decider{name: "policy " + r.Policies[i].Name, sum: &r.Policies[i]})
	}
	for _, o := range r.Worlds {
		if o.Err != "" || len(o.Policies) != len(r.Policies) {
			continue
		}
		ds[0].gains = append(ds[0].gains, o.Raw.TrueGain)
		for j, s := range o.Policies {
			ds[j+1].gains = append(ds[j+1].gains, s.TrueGain)
		}
	}
	return ds
}

func newRehearsalView(r *rehearsal.Result) (*rehearsalView, error) {
	ds := deciders(r)
	n, wrong := 0, 0
	var kinds []string
	for _, o := range r.Worlds {
		n++
		if o.Kind != rehearsal.WellSpecified {
			wrong++
			if !slices.Contains(kinds, string(o.Kind)) {
				kinds = append(kinds, string(o.Kind))
			}
		}
	}
	slices.Sort(kinds)
	weeks := plural(r.Sizes.Horizon, "week", "weeks")
	v := &rehearsalView{
		Title:   "Rehearsal of the decision policies",
		Caution: record.Caution,
		Facts: []string{plural(n, "world", "worlds"), "seed " + strconv.FormatUint(r.Seed, 10), "horizon " + weeks,
			plural(len(r.Policies), "policy", "policies")},
	}
	broke := "none broke an assumption of the model"
	if wrong > 0 {
		broke = fmt.Sprintf("%d of them (%s) broke one assumption of the model: %s", wrong,
			pct(float64(wrong)/float64(max(n, 1))), joinAnd(kinds))
	}
	v.Intro = fmt.Sprintf("Each of the %s below was simulated from the fit to your data: parameters from one of %s of the data, "+
		"the real spend history and resampled residuals of the real fit; %s. In every world the whole decision ran again "+
		"(fit, a bootstrap of %s, validation with %s, allocation, gate), and each plan is scored by its true gain over %s "+
		"against keeping the current spend, which only a simulation can know. The oracle is the best plan under the world's truth "+
		"with the same constraints. Seed %d reproduces every world.",
		plural(n, "world", "worlds"), plural(r.Sizes.BaseDraws, "bootstrap draw", "bootstrap draws"), broke,
		plural(r.Sizes.WorldDraws, "draw", "draws"), plural(r.Sizes.Replicates, "recovery panel", "recovery panels"), weeks, r.Seed)
	if r.Errors > 0 {
		v.Errors = fmt.Sprintf("%s of %d could not be decided and are left out of every figure; by stage:",
			plural(r.Errors, "world", "worlds"), r.Errors+r.Decided)
		for _, f := range r.Failures {
			v.Failures = append(v.Failures, fmt.Sprintf("%s: %s — %s", f.Stage, plural(f.Worlds, "world", "worlds"), strings.Join(f.Reasons, "; ")))
		}
	}
	if r.Loud() {
		v.Loud = fmt.Sprintf("%s of the worlds could not be decided (more than %s): the figures below cover only the worlds that could, which may not be like the others.",
			pct(r.FailedShareOfWorlds()), pct(rehearsal.LoudShare))
	}
	for _, d := range ds {
		s := d.sum
		refused := pct(s.Refused)
		if d.sum == &r.Raw {
			refused = "no gate"
		}
		v.Summary = append(v.Summary, summaryRow{Name: d.name, Worlds: strconv.Itoa(s.Worlds), PLoss: pct(s.PLoss),
			Mean: signedMoney(s.MeanGain), P05: signedMoney(s.P05Gain), Oracle: pct(s.OracleShare), Refused: refused})
		v.Deciders = append(v.Deciders, d.name)
	}

	chart, err := tradeoffChart(ds)
	if err != nil {
		return nil, err
	}
	if chart != nil {
		label := "Chance of a losing decision against share of the oracle's gain captured: " + tradeoffWords(ds)
		if v.TradeoffChart, err = inlineSVG(chart, "chart-tradeoff", label); err != nil {
			return nil, err
		}
		v.TradeoffCaption = "Lower is safer, further right captures more of what there was to gain. " + tradeoffWords(ds)
	}
	chart, err = gainsChart(ds, r.Sizes.Horizon)
	if err != nil {
		return nil, err
	}
	if chart != nil {
		label := "Box plots of the true gain over " + weeks + " in each world, one per way of deciding, with zero marked"
		if v.GainsChart, err = inlineSVG(chart, "chart-gains", label); err != nil {
			return nil, err
		}
		v.GainsCaption = "Each box spans the middle half of the worlds' true gains, the line inside is the median, " +
			"the whiskers reach the furthest world within 1.5 box lengths and the circles are worlds beyond them. " +
			"Left of the solid line at zero the decision lost money."
	}

	order := append([]rehearsal.Kind{rehearsal.WellSpecified}, rehearsal.AllKinds...)
	for k := range r.Raw.ByWorldKind {
		if !slices.Contains(order, k) {
			order = append(order, k)
		}
	}
	for _, k := range order {
		raw := r.Raw.ByWorldKind[k]
		if raw == nil {
			continue
		}
		name := string(k)
		if k == rehearsal.WellSpecified {
			name = "none (the model's own form)"
		}
		row := kindRow{Kind: name, Worlds: strconv.Itoa(raw.Worlds), Failed: pct(r.FailedShare[k])}
		for _, d := range ds {
			s := d.sum.ByWorldKind[k]
			if s == nil {
				row.Cells = append(row.Cells, "n/a", "n/a")
				continue
			}
			row.Cells = append(row.Cells, pct(s.PLoss), pct(s.OracleShare))
		}
		v.Kinds = append(v.Kinds, row)
	}
	for _, k := range rehearsal.AllKinds {
		if slices.ContainsFunc(r.Checks, func(c rehearsal.CheckRate) bool { _, ok := c.Power[k]; return ok }) {
			v.CheckKinds = append(v.CheckKinds, string(k))
		}
	}
	for _, c := range r.Checks {
		row := checkRow{Name: c.Name, Stated: "not a test", Realised: "n/a"}
		if c.Stated > 0 {
			row.Stated = pct(c.Stated)
		}
		if c.Worlds > 0 {
			row.Realised = pct(c.FalseAlarm)
		}
		for _, k := range v.CheckKinds {
			if p, ok := c.Power[rehearsal.Kind(k)]; ok {
				row.Power = append(row.Power, pct(p))
			} else {
				row.Power = append(row.Power, "n/a")
			}
		}
		v.CheckRows = append(v.CheckRows, row)
	}
	return v, nil
}

// tradeoffWords says in words where each decider sits on the chart.
func tradeoffWords(ds []decider) string {
	w := make([]string, len(ds))
	for i, d := range ds {
		w[i] = fmt.Sprintf("%s loses in %s of worlds and captures %s", d.name, pct(d.sum.PLoss), pct(d.sum.OracleShare))
	}
	s := strings.Join(w, "; ") + "."
	return strings.ToUpper(s[:1]) + s[1:] // decider names start with ASCII "raw"
}

// deciderGlyphs: the raw proposal keeps the brief's proposal marker (an
// orange triangle); policies take the other shapes and colours in turn.
var deciderGlyphs = []draw.GlyphStyle{
	proposedGlyph,
	{Color: blue, Radius: vg.Points(4), Shape: marker{disc}},
	approvedGlyph,
	{Color: black, Radius: vg.Points(3.5), Shape: marker{disc}},
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
	p.X.Tick.Marker, p.Y.Tick.Marker = shareTicks{}, shareTicks{}
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
	// Room for the labels right of the markers and above the highest.
	span := p.X.Max - p.X.Min
	p.X.Max += 0.35 * span
	p.Y.Max *= 1.15
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
		// Black on white: the names on the axis tell the boxes apart.
		b.FillColor = nil
		b.BoxStyle = draw.LineStyle{Color: black, Width: vg.Points(1.2)}
		b.MedianStyle = draw.LineStyle{Color: black, Width: vg.Points(2)}
		b.WhiskerStyle = draw.LineStyle{Color: black, Width: vg.Points(0.8)}
		b.GlyphStyle = draw.GlyphStyle{Color: black, Radius: vg.Points(2), Shape: draw.RingGlyph{}}
		p.Add(b)
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
	leg := newLegend()
	leg.Add("break-even (0)", zero)
	h := vg.Length(n)*0.45*vg.Inch + 0.8*vg.Inch
	return svgWithLegend(p, leg, 7*vg.Inch, h)
}
