package model

import (
	"fmt"
	"math"
)

// BoundTolerance is how close to a bound a fitted nonlinear parameter must
// end to count as on it: this share of the parameter's range (of its log
// range for the half saturation κ, which the fit searches on a log scale).
// Common practice, no source: 1% of the box is well inside the solver's
// step at convergence and well outside what a free optimum lands on by
// chance.
const BoundTolerance = 0.01

// Bound sides.
const (
	BoundLower = "lower"
	BoundUpper = "upper"
)

// BoundHit is one nonlinear parameter that the fit left on (or within
// BoundTolerance of) a bound of its box.
type BoundHit struct {
	Param string  `json:"param"` // decay, peak, half_saturation or shape
	Value float64 `json:"value"`
	Bound float64 `json:"bound"`
	Side  string  `json:"side"` // lower or upper
}

// Identification says what a fit could not settle about one channel: its
// nonlinear parameters left on a bound, and whether its media effect was
// fitted to zero. A channel with neither is Identified.
type Identification struct {
	Channel    string     `json:"channel"`
	OnBound    []BoundHit `json:"on_bound,omitempty"`
	ZeroEffect bool       `json:"zero_effect"`
	// Hints say, one per finding, what the finding means and what to do.
	Hints []string `json:"hints,omitempty"`
}

// Identified reports whether the fit settled the channel: no parameter on
// a bound and a non-zero effect.
func (id Identification) Identified() bool { return len(id.OnBound) == 0 && !id.ZeroEffect }

// Identify reports, per channel, the nonlinear parameters of p on a bound of
// the spec's box and whether the channel's effect is zero. A parameter the
// spec fixes (both bounds equal) is not reported. The effect is zero when β
// is 0 (the non-negative least squares fit leaves β exactly 0 at its
// constraint) or the channel's contribution over the data is below 1e-9 of
// all channels' contributions together.
func (d *Design) Identify(p Params) []Identification {
	out := make([]Identification, len(d.Spec.Channels))
	contrib := make([]float64, len(d.Spec.Channels))
	var total float64
	m := make([]float64, d.N)
	for k, cp := range p.Channels {
		d.Media(m, k, cp)
		for _, v := range m {
			contrib[k] += cp.Beta * v
		}
		if !math.IsNaN(contrib[k]) {
			total += math.Abs(contrib[k])
		}
	}
	for k, c := range d.Spec.Channels {
		cp := p.Channels[k]
		id := Identification{Channel: c.Name}
		check := func(name string, v float64, r Range, logScale bool) {
			lo, hi, x := r[0], r[1], v
			if hi <= lo {
				return // fixed by the spec
			}
			if logScale && lo > 0 && x > 0 {
				lo, hi, x = math.Log(lo), math.Log(hi), math.Log(x)
			}
			tol := BoundTolerance * (hi - lo)
			switch {
			case x <= lo+tol:
				id.OnBound = append(id.OnBound, BoundHit{Param: name, Value: v, Bound: r[0], Side: BoundLower})
			case x >= hi-tol:
				id.OnBound = append(id.OnBound, BoundHit{Param: name, Value: v, Bound: r[1], Side: BoundUpper})
			}
		}
		check("decay", cp.Decay, c.Decay, false)
		if c.Adstock == AdstockDelayed {
			check("peak", cp.Peak, c.Peak, false)
		}
		check("half_saturation", cp.HalfSat, c.HalfSaturation, true)
		if c.Saturation == SaturationHill {
			check("shape", cp.Shape, c.Shape, false)
		}
		id.ZeroEffect = cp.Beta == 0 || math.IsNaN(contrib[k]) || math.Abs(contrib[k]) <= 1e-9*total
		for _, h := range id.OnBound {
			id.Hints = append(id.Hints, boundHint(h))
		}
		if id.ZeroEffect {
			id.Hints = append(id.Hints, "its effect is fitted to zero: the data cannot tell this channel's response from none; "+
				"do not move budget on it until a lift test or deliberate spend variation measures it")
		}
		out[k] = id
	}
	return out
}

// boundHint says what a parameter on a bound means and what to do.
func boundHint(h BoundHit) string {
	on := fmt.Sprintf("%s %.3g is on its %s bound %.3g", h.Param, h.Value, h.Side, h.Bound)
	switch {
	case h.Param == "decay" && h.Side == BoundLower:
		return on + ": no carryover found; if the channel surely has carryover, the data cannot separate it from the base"
	case h.Param == "decay":
		return on + ": carryover at least as long as the box allows; widen decay in --spec if longer carryover is plausible, and treat its half-life as a lower limit"
	case h.Param == "half_saturation" && h.Side == BoundLower:
		return on + ": the channel looks saturated below its mean spend, maybe more than the box allows; lower half_saturation in --spec and refit, and trust its marginal ROI less"
	case h.Param == "half_saturation":
		return on + ": the response looks straight over the spend seen, so the data cannot say where it saturates; a move beyond that spend is a guess"
	case h.Param == "shape":
		return on + ": the curve's form is not settled by the data; its marginal ROI depends on the box more than on the data"
	default:
		return on + ": the data do not settle it; widen its bounds in --spec or fix it from outside knowledge"
	}
}
