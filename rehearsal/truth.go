package rehearsal

import (
	"math"

	"sluice/model"
	"sluice/optimize"
)

// trueChannel is one channel's response in a world, computed by this
// file's own code, not by the model's transforms or curves: the world's
// KPI, its lift tests and every plan's true gain come from here, so the
// rehearsal grades the fitted model against something the model's code did
// not compute. A well-specified world translates a drawn model.Params into
// the same response (same kernel, same half-saturation level); the
// carryover and shape worlds give it a kernel or a curve the model cannot
// express.
type trueChannel struct {
	beta   float64   // KPI per unit of saturated adstock
	kernel []float64 // adstock weight by lag; kernel[0] is the same week
	half   float64   // adstock level of half saturation (Hill) or the scale (exponential)
	shape  float64   // Hill shape; 0 means exponential saturation 1 − exp(−a/half)
	// threshold is the adstock below which nothing responds: sat(a) is
	// the Hill curve of max(0, a − threshold) (shape worlds only).
	threshold float64
}

// kernelTail is the relative weight below which a geometric kernel is cut.
const kernelTail = 1e-9

// newTrueChannel translates channel k of p on design d: a geometric kernel
// λ^l (cut where it falls below kernelTail, at most 520 weeks) or the
// delayed-peak weights λ^((l−θ)²) over the spec's lags, and the
// half-saturation level κ · mean spend · total kernel weight (README, "The
// model"), with the total weight of a geometric kernel in closed form
// 1/(1−λ).
func newTrueChannel(d *model.Design, k int, cp model.ChannelParams) trueChannel {
	c := d.Spec.Channels[k]
	tc := trueChannel{beta: cp.Beta}
	var g float64
	if c.Adstock == model.AdstockDelayed {
		for l := range c.MaxLag {
			w := 0.0
			switch {
			case cp.Decay == 0 && float64(l) == cp.Peak:
				w = 1
			case cp.Decay > 0:
				w = math.Pow(cp.Decay, (float64(l)-cp.Peak)*(float64(l)-cp.Peak))
			}
			tc.kernel = append(tc.kernel, w)
			g += w
		}
	} else {
		for l, w := 0, 1.0; l < 520 && w >= kernelTail; l, w = l+1, w*cp.Decay {
			tc.kernel = append(tc.kernel, w)
		}
		g = 1 / (1 - cp.Decay)
	}
	tc.half = cp.HalfSat * d.MeanSpend[k] * g
	if c.Saturation == model.SaturationHill {
		tc.shape = cp.Shape
	}
	return tc
}

// adstock returns a_t = Σ_l kernel[l] x_{t−l} (the history before x is
// taken as zero spend).
func (c trueChannel) adstock(x []float64) []float64 {
	a := make([]float64, len(x))
	for t := range x {
		var s float64
		for l := 0; l < len(c.kernel) && l <= t; l++ {
			s += c.kernel[l] * x[t-l]
		}
		a[t] = s
	}
	return a
}

// sat is the saturation curve and its derivative.
func (c trueChannel) sat(a float64) (v, dv float64) {
	b := a - c.threshold
	if b <= 0 || c.half <= 0 {
		return 0, 0
	}
	if c.shape == 0 {
		e := math.Exp(-b / c.half)
		return 1 - e, e / c.half
	}
	bs, ks := math.Pow(b, c.shape), math.Pow(c.half, c.shape)
	return bs / (bs + ks), c.shape * ks * bs / b / ((bs + ks) * (bs + ks))
}

// media returns sat(adstock(x)) per week.
func (c trueChannel) media(x []float64) []float64 {
	a := c.adstock(x)
	for t, v := range a {
		a[t], _ = c.sat(v)
	}
	return a
}

// twoSpeed returns a kernel of the same total weight as k that no
// geometric or delayed-peak kernel can express: half of the weight decays
// at 0.1 a week, half at 0.9 (a fast and a slow carryover at once).
func twoSpeed(k []float64) []float64 {
	var g float64
	for _, w := range k {
		g += w
	}
	var out []float64
	for l, f, s := 0, 1.0, 1.0; l < 520 && s >= kernelTail; l, f, s = l+1, f*0.1, s*0.9 {
		out = append(out, g*(0.5*0.9*f+0.5*0.1*s))
	}
	return out
}

// trueResponse is a world's horizon response, one draw: channel k's extra
// KPI R_k(w) from spending w per week over the horizon's H weeks, starting
// from the adstock the history leaves, counted over the horizon and the
// kernel's tail, minus the same with w = 0 (README, "The model"). β is the
// channel's β for the horizon. It implements optimize.Response.
type trueResponse struct {
	ch          []trueChannel
	carry, unit [][]float64 // per channel: adstock of the history, of one unit a week over the horizon
}

func newTrueResponse(chans []trueChannel, spend [][]float64, h int) *trueResponse {
	r := &trueResponse{ch: chans}
	for k, c := range chans {
		n := len(spend[k])
		T := h + len(c.kernel)
		hist := make([]float64, n+T)
		copy(hist, spend[k])
		unit := make([]float64, n+T)
		for t := n; t < n+h; t++ {
			unit[t] = 1
		}
		r.carry = append(r.carry, c.adstock(hist)[n:])
		r.unit = append(r.unit, c.adstock(unit)[n:])
	}
	return r
}

func (r *trueResponse) NumDraws() int    { return 1 }
func (r *trueResponse) NumChannels() int { return len(r.ch) }

func (r *trueResponse) Eval(_, k int, w float64) (v, dv float64) {
	c := r.ch[k]
	if c.beta == 0 {
		return 0, 0
	}
	for t, a := range r.carry[k] {
		u := r.unit[k][t]
		s, ds := c.sat(a + w*u)
		s0, _ := c.sat(a)
		v += s - s0
		dv += ds * u
	}
	return c.beta * v, c.beta * dv
}

var _ optimize.Response = (*trueResponse)(nil)

// liftEffect is what a lift test of the channel over weeks [from, to] of
// history x measures: Σ over the window of β_t (sat(a_t) − sat(a⁰_t)), a⁰
// the adstock with the window's spend zeroed; carryover after the window is
// not seen by an experiment that compares the test period only.
func (c trueChannel) liftEffect(x, betaByWeek []float64, from, to int) float64 {
	x0 := append([]float64(nil), x...)
	for t := from; t <= to; t++ {
		x0[t] = 0
	}
	m, m0 := c.media(x), c.media(x0)
	var s float64
	for t := from; t <= to; t++ {
		s += betaByWeek[t] * (m[t] - m0[t])
	}
	return s
}
