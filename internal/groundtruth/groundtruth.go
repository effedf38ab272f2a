// Package groundtruth computes what a simulated world's response model
// truly is — the KPI's mean path, each channel's ROI, horizon response and
// marginal ROI, and the best plan under a budget — straight from the
// formulas in the README, written apart from package model: adstock is a
// direct convolution with the kernel's weights (model uses a recursion),
// the horizon response counts the carryover tail until the kernel is
// negligible (model stops at 0.1% of its peak), the marginal ROI is a
// central difference (model differentiates analytically) and the optimum is
// found by a Lagrange-multiplier search on a grid (model's allocator uses
// SQP). Tests grade the estimator against it; it is cross-checked live
// against a NumPy/SciPy script (testdata/truth_ref.py).
package groundtruth

import (
	"errors"
	"fmt"
	"math"
)

// Channel is one channel of a world with its true parameters.
type Channel struct {
	Spend      []float64 // weekly spend over the data
	Adstock    string    // "geometric" or "delayed"
	Saturation string    // "hill" or "exponential"
	Decay      float64   // λ
	Peak       float64   // θ, delayed only
	MaxLag     int       // L, delayed only
	HalfSat    float64   // κ: half saturation as a multiple of the steady-state adstock of mean spend
	Shape      float64   // Hill only
	Beta       float64   // KPI per week at full saturation
}

// World is a simulated world: its channels, the baseline of the KPI
// (everything but media), and the planning horizon H in weeks.
type World struct {
	Channels []Channel
	Base     []float64
	Horizon  int
}

// CurrentWeeks is how many final weeks make up current spend.
const CurrentWeeks = 13

// Check returns an error for a world the formulas do not cover.
func (w *World) Check() error {
	if len(w.Channels) == 0 || w.Horizon < 1 {
		return errors.New("groundtruth: a world needs channels and a horizon")
	}
	for k, c := range w.Channels {
		if len(c.Spend) != len(w.Base) || len(c.Spend) == 0 {
			return fmt.Errorf("groundtruth: channel %d: %d weeks of spend, %d of base", k, len(c.Spend), len(w.Base))
		}
		if c.Decay < 0 || c.Decay >= 1 || c.HalfSat <= 0 || c.Beta < 0 {
			return fmt.Errorf("groundtruth: channel %d: parameters out of range", k)
		}
		if c.Adstock != "geometric" && c.Adstock != "delayed" || c.Saturation != "hill" && c.Saturation != "exponential" {
			return fmt.Errorf("groundtruth: channel %d: kinds %q, %q", k, c.Adstock, c.Saturation)
		}
		if c.Adstock == "delayed" && c.MaxLag < 1 {
			return fmt.Errorf("groundtruth: channel %d: max lag %d", k, c.MaxLag)
		}
	}
	return nil
}

// Kernel returns the adstock weights w_l by lag: λ^l (geometric, until
// below 1e-16 of the first) or λ^((l−θ)²) for l < L (delayed, with 0^0 = 1).
func (c *Channel) Kernel() []float64 {
	if c.Adstock == "delayed" {
		w := make([]float64, c.MaxLag)
		for l := range w {
			d := float64(l) - c.Peak
			if c.Decay == 0 {
				if d == 0 {
					w[l] = 1
				}
				continue
			}
			w[l] = math.Pow(c.Decay, d*d)
		}
		return w
	}
	w := []float64{1}
	for v := c.Decay; v > 1e-16; v *= c.Decay {
		w = append(w, v)
	}
	return w
}

// Adstocked convolves x with the kernel: a_t = Σ_l w_l x_{t−l}.
func (c *Channel) Adstocked(x []float64) []float64 {
	k := c.Kernel()
	a := make([]float64, len(x))
	for t := range x {
		var s float64
		for l := 0; l < len(k) && l <= t; l++ {
			s += k[l] * x[t-l]
		}
		a[t] = s
	}
	return a
}

// HalfSatLevel is the adstock at half saturation: κ · mean spend · Σ_l w_l.
func (c *Channel) HalfSatLevel() float64 {
	var g, m float64
	for _, v := range c.Kernel() {
		g += v
	}
	for _, v := range c.Spend {
		m += v
	}
	m /= float64(len(c.Spend))
	return c.HalfSat * m * g
}

// Sat is the saturation curve at adstock a: a^s/(a^s + K^s) (Hill) or
// 1 − e^(−a/K) (exponential).
func (c *Channel) Sat(a, K float64) float64 {
	if a <= 0 {
		return 0
	}
	if c.Saturation == "exponential" {
		return -math.Expm1(-a / K)
	}
	return 1 / (1 + math.Pow(K/a, c.Shape))
}

// Media is β·sat(adstock(x)) week by week.
func (c *Channel) Media(x []float64) []float64 {
	K := c.HalfSatLevel()
	a := c.Adstocked(x)
	for t, v := range a {
		a[t] = c.Beta * c.Sat(v, K)
	}
	return a
}

// MeanPath is the KPI's mean: base plus every channel's media.
func (w *World) MeanPath() []float64 {
	y := append([]float64(nil), w.Base...)
	for k := range w.Channels {
		for t, v := range w.Channels[k].Media(w.Channels[k].Spend) {
			y[t] += v
		}
	}
	return y
}

// Contribution is channel k's media KPI over the data.
func (w *World) Contribution(k int) float64 {
	var s float64
	for _, v := range w.Channels[k].Media(w.Channels[k].Spend) {
		s += v
	}
	return s
}

// ROI is channel k's contribution over the data divided by its spend.
func (w *World) ROI(k int) float64 {
	var sx float64
	for _, v := range w.Channels[k].Spend {
		sx += v
	}
	if sx == 0 {
		return 0
	}
	return w.Contribution(k) / sx
}

// Lift is what a perfect lift test of channel k over weeks [from, to]
// (inclusive) measures: the KPI caused inside the window by the window's
// spend — media with the spend minus media with the window's spend zeroed,
// summed over the window (carryover after the window is not seen by such a
// test; spend before it cancels).
func (w *World) Lift(k, from, to int) float64 {
	c := &w.Channels[k]
	x0 := append([]float64(nil), c.Spend...)
	for t := from; t <= to; t++ {
		x0[t] = 0
	}
	m1, m0 := c.Media(c.Spend), c.Media(x0)
	var s float64
	for t := from; t <= to; t++ {
		s += m1[t] - m0[t]
	}
	return s
}

// CurrentSpend is channel k's mean spend over the last CurrentWeeks weeks.
func (w *World) CurrentSpend(k int) float64 {
	x := w.Channels[k].Spend
	m := min(CurrentWeeks, len(x))
	var s float64
	for _, v := range x[len(x)-m:] {
		s += v
	}
	return s / float64(m)
}

// Response is channel k's horizon response R(s): the extra KPI from
// spending s in each of the next H weeks after the data, counted over the
// H weeks and the whole carryover tail (the kernel's full length), minus
// the same with no spend.
func (w *World) Response(k int, s float64) float64 {
	c := &w.Channels[k]
	n, H := len(c.Spend), w.Horizon
	tail := len(c.Kernel())
	with := make([]float64, n+H+tail)
	without := make([]float64, n+H+tail)
	copy(with, c.Spend)
	copy(without, c.Spend)
	for t := n; t < n+H; t++ {
		with[t] = s
	}
	a1, a0 := c.Media(with), c.Media(without)
	var r float64
	for t := n; t < len(with); t++ {
		r += a1[t] - a0[t]
	}
	return r
}

// MarginalROI is dR/ds / H at s by a central difference of step 1e-4·s
// (1e-4·mean spend at s = 0 uses a one-sided difference).
func (w *World) MarginalROI(k int, s float64) float64 {
	h := 1e-4 * s
	if h == 0 {
		h = 1e-4 * w.CurrentSpend(k)
		if h == 0 {
			h = 1e-4
		}
		return (w.Response(k, h) - w.Response(k, 0)) / h / float64(w.Horizon)
	}
	return (w.Response(k, s+h) - w.Response(k, s-h)) / (2 * h) / float64(w.Horizon)
}

// Gain is the true gain of weekly plan p over the status quo q:
// value·Σ_k (R_k(p_k) − R_k(q_k)) − H·Σ_k (p_k − q_k).
func (w *World) Gain(p, q []float64, value float64) float64 {
	var g float64
	for k := range w.Channels {
		g += value*(w.Response(k, p[k])-w.Response(k, q[k])) - float64(w.Horizon)*(p[k]-q[k])
	}
	return g
}

// Optimum maximizes value·Σ R_k(s_k) − H·Σ s_k over weekly plans with
// lo_k ≤ s_k ≤ hi_k and Σ s_k = budget. For a multiplier ν each channel
// takes the best s_k of value·R_k(s) − (H + ν)s on a grid of 400 points of
// [lo_k, hi_k] refined by golden-section search around the best point; ν
// is bisected until the budget holds (to 1e-9 of it). The response curves
// may be S-shaped, so the grid, not a derivative, finds each channel's best
// point. It returns an error when the budget lies outside [Σ lo, Σ hi].
func (w *World) Optimum(value, budget float64, lo, hi []float64) ([]float64, error) {
	K := len(w.Channels)
	var slo, shi float64
	for k := range K {
		slo += lo[k]
		shi += hi[k]
	}
	if budget < slo-1e-9*math.Abs(budget) || budget > shi+1e-9*math.Abs(budget) {
		return nil, fmt.Errorf("groundtruth: budget %g outside [%g, %g]", budget, slo, shi)
	}
	H := float64(w.Horizon)
	const grid = 400
	// The responses on the grid do not depend on ν: compute them once.
	rg := make([][]float64, K)
	for k := range K {
		rg[k] = make([]float64, grid+1)
		step := (hi[k] - lo[k]) / grid
		for i := range rg[k] {
			rg[k][i] = w.Response(k, lo[k]+float64(i)*step)
		}
	}
	best := func(k int, nu float64) float64 {
		f := func(s float64) float64 { return value*w.Response(k, s) - (H+nu)*s }
		step := (hi[k] - lo[k]) / grid
		bs, bv := lo[k], value*rg[k][0]-(H+nu)*lo[k]
		for i := 1; i <= grid; i++ {
			s := lo[k] + float64(i)*step
			if v := value*rg[k][i] - (H+nu)*s; v > bv {
				bs, bv = s, v
			}
		}
		a, b := math.Max(lo[k], bs-step), math.Min(hi[k], bs+step)
		g := (math.Sqrt(5) - 1) / 2
		for range 80 {
			c, d := b-g*(b-a), a+g*(b-a)
			if f(c) > f(d) {
				b = d
			} else {
				a = c
			}
		}
		if m := (a + b) / 2; f(m) > bv {
			return m
		}
		return bs
	}
	plan := func(nu float64) ([]float64, float64) {
		p := make([]float64, K)
		var s float64
		for k := range K {
			p[k] = best(k, nu)
			s += p[k]
		}
		return p, s
	}
	// ν from very negative (everything at hi) to very positive (at lo).
	nlo, nhi := -H, H
	for {
		if _, s := plan(nlo); s >= budget {
			break
		}
		nlo *= 2
		if nlo < -1e12 {
			return nil, errors.New("groundtruth: no multiplier spends the budget")
		}
	}
	for {
		if _, s := plan(nhi); s <= budget {
			break
		}
		nhi *= 2
		if nhi > 1e12 {
			return nil, errors.New("groundtruth: no multiplier meets the budget")
		}
	}
	var p []float64
	for range 200 {
		mid := (nlo + nhi) / 2
		q, s := plan(mid)
		p = q
		if math.Abs(s-budget) <= 1e-9*math.Max(1, budget) {
			break
		}
		if s > budget {
			nlo = mid
		} else {
			nhi = mid
		}
	}
	// Spread what the bisection leaves over the channels with room, so the
	// budget holds exactly.
	var s float64
	for _, v := range p {
		s += v
	}
	for k := range K {
		d := budget - s
		if d == 0 {
			break
		}
		nv := math.Min(hi[k], math.Max(lo[k], p[k]+d))
		s += nv - p[k]
		p[k] = nv
	}
	return p, nil
}
