package model

import "math"

// tailWeeks is how long after the horizon carryover is still counted:
// until the adstock kernel has fallen below 0.1% of its peak (geometric), or
// the full lag window (delayed), at most two years.
func tailWeeks(c ChannelSpec, cp ChannelParams) int {
	if c.Adstock == AdstockDelayed {
		return c.MaxLag
	}
	if cp.Decay <= 0 {
		return 0
	}
	return min(104, int(math.Ceil(math.Log(1e-3)/math.Log(cp.Decay))))
}

// Curve is one channel's horizon response under one parameter set: the
// extra KPI R(w) from spending w per week in each of the horizon's H weeks,
// starting from the adstock state at the end of the data, counted over the
// H weeks and the carryover tail, minus the same with w = 0. Adstock is
// linear in spend, so the adstock in future week t is carry_t + w·unit_t:
// carry is what the history leaves, unit the adstock of one currency unit
// per week over the horizon.
type Curve struct {
	Saturation string
	Beta       float64
	K          float64 // adstock level of half saturation (Design.HalfSatLevel)
	Shape      float64
	Carry      []float64
	Unit       []float64
	base       float64 // Σ sat(carry_t), the w = 0 response
	// Betas, for a seasonal effectiveness, is the coefficient of every
	// future week (Beta is then their mean over the horizon); nil means
	// Beta in every week.
	Betas    []float64
	baseWeek []float64 // sat(carry_t), with Betas
}

// NewCurve builds channel k's curve under cp for a horizon of h weeks.
func (d *Design) NewCurve(k int, cp ChannelParams, h int) *Curve {
	c := d.Spec.Channels[k]
	T := h + tailWeeks(c, cp)
	x := d.Spend[k]
	n := len(x)
	// Adstock of [history, zeros] and of [zeros, ones for h weeks, zeros].
	hist := make([]float64, n+T)
	copy(hist, x)
	unit := make([]float64, n+T)
	for t := n; t < n+h; t++ {
		unit[t] = 1
	}
	ah := make([]float64, n+T)
	au := make([]float64, n+T)
	if c.Adstock == AdstockDelayed {
		Delayed(ah, nil, nil, hist, cp.Decay, cp.Peak, c.MaxLag)
		Delayed(au, nil, nil, unit, cp.Decay, cp.Peak, c.MaxLag)
	} else {
		Geometric(ah, hist, cp.Decay)
		Geometric(au, unit, cp.Decay)
	}
	cv := &Curve{Saturation: c.Saturation, Beta: cp.Beta, K: d.HalfSatLevel(k, cp), Shape: cp.Shape,
		Carry: ah[n:], Unit: au[n:]}
	for _, a := range cv.Carry {
		cv.base += cv.sat(a)
	}
	if cp.Effect != nil && cp.Effect.Period > 0 {
		cv.Betas, cv.baseWeek = make([]float64, T), make([]float64, T)
		for t := range T {
			cv.Betas[t] = cp.BetaAt(n + t)
			cv.baseWeek[t] = cv.sat(cv.Carry[t])
		}
	}
	return cv
}

func (c *Curve) sat(a float64) float64 {
	if c.Saturation == SaturationExponential {
		return Exponential(a, c.K)
	}
	return Hill(a, c.K, c.Shape)
}

// Eval returns R(w) and dR/dw.
func (c *Curve) Eval(w float64) (r, dr float64) {
	if c.Betas != nil {
		return c.evalWeekly(w)
	}
	if c.Beta == 0 {
		return 0, 0
	}
	var s, ds float64
	for t, carry := range c.Carry {
		u := c.Unit[t]
		a := carry + w*u
		if c.Saturation == SaturationExponential {
			v, da, _ := ExponentialDerivs(a, c.K)
			s += v
			ds += da * u
		} else {
			v, da, _, _ := HillDerivs(a, c.K, c.Shape)
			s += v
			ds += da * u
		}
	}
	return c.Beta * (s - c.base), c.Beta * ds
}

// evalWeekly is Eval with a coefficient per week (seasonal effectiveness).
func (c *Curve) evalWeekly(w float64) (r, dr float64) {
	for t, carry := range c.Carry {
		u := c.Unit[t]
		a := carry + w*u
		var v, da float64
		if c.Saturation == SaturationExponential {
			v, da, _ = ExponentialDerivs(a, c.K)
		} else {
			v, da, _, _ = HillDerivs(a, c.K, c.Shape)
		}
		r += c.Betas[t] * (v - c.baseWeek[t])
		dr += c.Betas[t] * da * u
	}
	return r, dr
}

// Curves is the horizon response of every channel under every parameter
// draw; it implements optimize.Response.
type Curves struct {
	Horizon int
	curves  [][]*Curve // [draw][channel]
}

// NewCurves builds the curves of each draw for a horizon of h weeks.
func (d *Design) NewCurves(draws []Params, h int) *Curves {
	cs := &Curves{Horizon: h, curves: make([][]*Curve, len(draws))}
	for i, p := range draws {
		row := make([]*Curve, len(p.Channels))
		for k, cp := range p.Channels {
			row[k] = d.NewCurve(k, cp, h)
		}
		cs.curves[i] = row
	}
	return cs
}

func (c *Curves) NumDraws() int    { return len(c.curves) }
func (c *Curves) NumChannels() int { return len(c.curves[0]) }
func (c *Curves) Eval(d, k int, w float64) (r, dr float64) {
	return c.curves[d][k].Eval(w)
}

// Curve returns the curve of draw d, channel k.
func (c *Curves) Curve(d, k int) *Curve { return c.curves[d][k] }
