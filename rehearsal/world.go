package rehearsal

import (
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/stat"

	"sluice/model"
	"sluice/uncertainty"
)

// Kind names how a world breaks the model's assumptions.
type Kind string

// The kinds of world. Each misspecified kind affects one channel (and the
// break also the base); a drift or season world affects a channel that
// matters (liveShare). The sizes are rules of thumb (common practice, no
// source) chosen to be large enough to matter for a quarter's plan.
const (
	WellSpecified Kind = "none"       // the model's own form, parameters from a bootstrap draw
	Drift         Kind = "drift"      // β ramps up 50–100% or down 30–50%, over the whole history or its last third
	Season        Kind = "season"     // β varies ±40% over the year with a random phase
	Carryover     Kind = "carryover"  // the channel's carryover is fast and slow at once: a kernel no geometric or delayed-peak adstock expresses
	Shape         Kind = "shape"      // nothing responds below a threshold of adstock: a curve no Hill or exponential saturation expresses
	Confounder    Kind = "confounder" // an unobserved driver correlated 0.7 with the channel's spend adds to the KPI
	Break         Kind = "break"      // β jumps ×0.5 or ×1.5 and the base shifts ±5% 8–20 weeks before the end
)

// AllKinds lists the misspecified kinds in a fixed order.
var AllKinds = []Kind{Drift, Season, Carryover, Shape, Confounder, Break}

// A drift world draws its size and its ramp from its own stream: a rising
// β ends ×1.5 to ×2 its start, a falling one ×0.5 to ×0.7 (the ranges of
// issue 16's test panels, uniform within them), and in driftLateShare of
// the worlds the ramp covers only the last third of the history (flat
// before), the late change a constant fit averages away and the
// effectiveness evidence is meant to see. Common practice, no source: the
// sizes a marketer reports for creative wear-out or a channel maturing.
const (
	driftRiseLo, driftRiseHi = 1.5, 2.0
	driftFallLo, driftFallHi = 0.5, 0.7
	driftLateShare           = 0.5
)

// Ramps of a drift world (Outcome.DriftRamp).
const (
	RampWhole = "whole_history"
	RampLate  = "last_third"
)

const (
	// seasonSize is the season world's amplitude: β swings ±40% of its
	// mean over the year. The seasonal specification (model.EffectSeasonal,
	// a periodic spline of the week of the year) can express this sine
	// exactly up to its spline error, and ±40% over three years is large
	// enough for the seasonal evidence to name in most worlds (measured in
	// TestEffectOptionStudy's log); common practice, no source.
	seasonSize = 0.40
	// shapeThreshold is the shape world's threshold as a share of the
	// channel's mean adstock over the history.
	shapeThreshold = 0.5
	confounderCorr = 0.7
	confounderSize = 0.5 // SD of the driver as a share of the channel's mean contribution
	breakSize      = 0.5
	breakBase      = 0.05 // base shift as a share of the mean KPI
)

// World is one rehearsal world: the truth and the panel drawn from it.
type World struct {
	Index   int
	Kind    Kind
	Channel string // the affected channel; "" for WellSpecified
	Draw    int    // the base bootstrap draw its parameters come from
	Seed    uint64 // seeds the decision process run on the world
	// DriftEnd is a drift world's β in the last week of history over its
	// β at the start (×1.5 to ×2 rising, ×0.5 to ×0.7 falling); 0 in
	// other worlds. DriftFrom is the last week at the start's β: 0 for a
	// ramp over the whole history, n − ⌈n/3⌉ − 1 for one over the last
	// third; DriftRamp names the two.
	DriftEnd  float64
	DriftFrom int
	DriftRamp string
	// Truth is the drawn model parameters with the affected channel's β
	// as the horizon meets it: the end-of-history β (after a drift or
	// break), and for a season the channel's mean over the horizon's own
	// weeks. In a carryover or shape world the true response is outside the
	// model's family and Truth is only its nearest description; the true
	// gains come from the world's own response (trueChannels). A confounder
	// is not caused by spend, so it is not in the truth.
	Truth model.Params
	Panel *model.Panel
	// chans is every channel's true response for the horizon, computed by
	// this package's own code (truth.go).
	chans []trueChannel

	histChans []trueChannel // the responses the history was drawn from, before β's changes
	affected  int           // index of the affected channel
	mult      []float64     // per week of history, the factor on its β
}

// trueResponse is the world's horizon response for a horizon of h weeks.
func (w *World) trueResponse(h int) *trueResponse {
	return newTrueResponse(w.chans, w.Panel.Spend, h)
}

// LiftTruth is what a lift test of channel k over weeks [from, to] of the
// history measures in this world, by the world's own response (truth.go):
// the affected channel's β week by week as the history had it. A
// confounder is not caused by spend and is not measured by an experiment.
func (w *World) LiftTruth(k, from, to int) float64 {
	beta := make([]float64, len(w.Panel.KPI))
	for t := range beta {
		beta[t] = w.histChans[k].beta
		if k == w.affected && w.mult != nil {
			beta[t] *= w.mult[t]
		}
	}
	return w.histChans[k].liftEffect(w.Panel.Spend[k], beta, from, to)
}

// base is what every world starts from: the user's panel and design, the
// bootstrap draws of its fit and the fit's residuals.
type base struct {
	panel  *model.Panel
	design *model.Design
	draws  []model.Params
	resid  []float64
	block  float64
	horiz  int
}

// world builds world i from (seed, i) alone.
func (b *base) world(seed uint64, i int, misspecified float64, kinds []Kind) *World {
	rng := uncertainty.Stream(seed, i)
	w := &World{Index: i, Kind: WellSpecified, Seed: rng.Uint64()}
	// The noise has a stream of its own, drawn before the kind, so that a
	// world and its misspecified twin (same seed and index, another share)
	// differ only by the departure: comparisons between them are paired.
	noiseRNG := rand.New(rand.NewPCG(rng.Uint64(), 0x6e6f697365))
	w.Draw = rng.IntN(len(b.draws))
	p := b.draws[w.Draw].Clone()
	d := b.design
	n, nk := d.N, len(p.Channels)
	k := rng.IntN(nk)
	if rng.Float64() < misspecified && len(kinds) > 0 {
		w.Kind = kinds[rng.IntN(len(kinds))]
		w.Channel = d.Spec.Channels[k].Name
	}
	sign := 1.0
	if rng.IntN(2) == 0 {
		sign = -1
	}
	chans := make([]trueChannel, nk)
	for j := range chans {
		chans[j] = newTrueChannel(d, j, p.Channels[j])
	}
	if w.Kind == Drift || w.Kind == Season {
		// Scaling the β of a channel the drawn truth gives (almost) no
		// effect changes nothing: such a world would count as a drift or
		// season world with no drift or season in it. The affected channel
		// is redrawn among those that matter (drawn after everything every
		// world draws, and only here, so other worlds are as before).
		if live := liveChannels(chans, d.Spend); len(live) > 0 && !slices.Contains(live, k) {
			k = live[rng.IntN(len(live))]
			w.Channel = d.Spec.Channels[k].Name
		}
	}

	// mult[t] scales channel k's β in week t; end is its value for the horizon.
	mult := make([]float64, n)
	for t := range mult {
		mult[t] = 1
	}
	end := 1.0
	extra := make([]float64, n) // added to the KPI, not caused by spend
	cp := &p.Channels[k]
	switch w.Kind {
	case Drift:
		// Drawn only in drift worlds, after everything every world draws,
		// so the other kinds' worlds are as before.
		w.DriftEnd = driftFallLo + (driftFallHi-driftFallLo)*rng.Float64()
		if sign > 0 {
			w.DriftEnd = driftRiseLo + (driftRiseHi-driftRiseLo)*rng.Float64()
		}
		w.DriftRamp = RampWhole
		if rng.Float64() < driftLateShare {
			w.DriftRamp, w.DriftFrom = RampLate, max(n-(n+2)/3-1, 0)
		}
		mult = driftPath(n, w.DriftFrom, w.DriftEnd)
		end = w.DriftEnd
	case Season:
		phase := 2 * math.Pi * rng.Float64()
		at := func(t int) float64 { return 1 + seasonSize*math.Sin(2*math.Pi*float64(t)/d.Spec.Period+phase) }
		for t := range mult {
			mult[t] = at(t)
		}
		// The horizon meets the season of its own weeks: their mean.
		end = 0
		for t := n; t < n+b.horiz; t++ {
			end += at(t) / float64(b.horiz)
		}
	case Carryover:
		chans[k].kernel = twoSpeed(chans[k].kernel)
	case Shape:
		a, _ := meanSD(chans[k].adstock(d.Spend[k]))
		chans[k].threshold = shapeThreshold * a
	case Confounder:
		x := d.Spend[k]
		mx, sx := meanSD(x)
		m := d.Media(make([]float64, n), k, *cp)
		mm, _ := meanSD(m)
		amp := confounderSize * cp.Beta * mm
		u := ar1(rng, n, 0.5)
		for t := range extra {
			zx := 0.0
			if sx > 0 {
				zx = (x[t] - mx) / sx
			}
			extra[t] = amp * (confounderCorr*zx + math.Sqrt(1-confounderCorr*confounderCorr)*u[t])
		}
	case Break:
		at := n - 8 - rng.IntN(13)
		f := 1 + sign*breakSize
		my, _ := meanSD(b.panel.KPI)
		shift := breakBase * my
		if rng.IntN(2) == 0 {
			shift = -shift
		}
		for t := at; t < n; t++ {
			mult[t] = f
			extra[t] = shift
		}
		end = f
	}

	// The truth KPI: the base (intercept, trend, season, controls) of the
	// drawn parameters, every channel's true media term (truth.go) with
	// channel k's β scaled week by week, the extra terms and resampled
	// residuals of the real fit.
	noMedia := p.Clone()
	for j := range noMedia.Channels {
		noMedia.Channels[j].Beta = 0
	}
	y := d.Predict(noMedia)
	for j, c := range chans {
		m := c.media(d.Spend[j])
		for t := range y {
			f := 1.0
			if j == k {
				f = mult[t]
			}
			y[t] += c.beta * f * m[t]
		}
	}
	noise := uncertainty.Resampler{Method: uncertainty.MovingBlock, BlockLength: b.block}.
		Residuals(make([]float64, n), b.resid, noiseRNG)
	for t := range y {
		y[t] = math.Max(0, y[t]+extra[t]+noise[t])
	}
	w.Truth = withBeta(p, k, cp.Beta*end)
	w.histChans, w.affected, w.mult = chans, k, mult
	w.chans = append([]trueChannel(nil), chans...)
	w.chans[k].beta = cp.Beta * end
	panel := *b.panel
	panel.Source = b.panel.Source + " (rehearsal world)"
	panel.KPI = y
	w.Panel = &panel
	return w
}

// liveShare is the smallest mean contribution, as a share of the largest
// channel's, of a channel a drift or season world may affect (common
// practice, no source: a channel below a tenth of the largest one's effect
// barely moves the KPI whatever its β does).
const liveShare = 0.1

// liveChannels are the channels whose mean contribution over the history,
// β · mean sat(adstock(spend)) by the world's own response code, is at
// least liveShare of the largest channel's.
func liveChannels(chans []trueChannel, spend [][]float64) []int {
	contrib := make([]float64, len(chans))
	var top float64
	for j, c := range chans {
		m, _ := meanSD(c.media(spend[j]))
		contrib[j] = c.beta * m
		top = max(top, contrib[j])
	}
	var live []int
	for j, v := range contrib {
		if top > 0 && v >= liveShare*top {
			live = append(live, j)
		}
	}
	return live
}

// driftPath is a drift world's β multiplier per week of an n-week
// history: 1 up to week from, then a straight line to end in week n − 1.
func driftPath(n, from int, end float64) []float64 {
	m := make([]float64, n)
	for t := range m {
		m[t] = 1
		if t > from && n-1 > from {
			m[t] = 1 + (end-1)*float64(t-from)/float64(n-1-from)
		}
	}
	return m
}

// withBeta returns a copy of p with channel k's β set to beta.
func withBeta(p model.Params, k int, beta float64) model.Params {
	q := p.Clone()
	q.Channels[k].Beta = beta
	return q
}

// meanSD is the mean and the sample standard deviation (n − 1, gonum/stat;
// 0 for a single value).
func meanSD(x []float64) (mean, sd float64) {
	if len(x) < 2 {
		return stat.Mean(x, nil), 0
	}
	return stat.MeanStdDev(x, nil)
}

// ar1 is model.AR1, the project's one AR(1) generator.
func ar1(rng *rand.Rand, n int, phi float64) []float64 { return model.AR1(rng, n, phi) }
