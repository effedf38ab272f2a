package model

import "math"

// CurrentWeeks is how many final weeks define "current spend" (the status
// quo of a plan and the point where marginal ROI is read).
const CurrentWeeks = 13

// CurrentSpend returns each channel's mean weekly spend over the last
// CurrentWeeks weeks (or all weeks if fewer).
func (d *Design) CurrentSpend() []float64 {
	out := make([]float64, len(d.Spend))
	for k, x := range d.Spend {
		w := min(CurrentWeeks, len(x))
		var s float64
		for _, v := range x[len(x)-w:] {
			s += v
		}
		out[k] = s / float64(w)
	}
	return out
}

// ChannelSummary describes one channel of a fitted model. Money figures
// are in currency; valuePerKPI converts a KPI counted in units.
type ChannelSummary struct {
	Name              string  `json:"name"`
	SpendShare        float64 `json:"spend_share"`
	ContributionShare float64 `json:"contribution_share"` // of the media contribution
	ROI               float64 `json:"roi"`                // contribution value / spend over the data
	MROI              float64 `json:"mroi"`               // marginal ROI at current spend over the horizon
	HalfLifeWeeks     float64 `json:"half_life_weeks"`
	Saturation        float64 `json:"saturation"` // sat() at the steady-state adstock of current spend, 0..1
	CurrentSpend      float64 `json:"current_spend"`
	Contribution      float64 `json:"contribution"` // KPI over the data
}

// Summarize computes the per-channel figures of README.md for parameters p.
func (d *Design) Summarize(p Params, valuePerKPI float64) []ChannelSummary {
	K := len(d.Spec.Channels)
	out := make([]ChannelSummary, K)
	cur := d.CurrentSpend()
	var totalSpend, totalContrib float64
	m := make([]float64, d.N)
	for k, cp := range p.Channels {
		c := d.Spec.Channels[k]
		d.Media(m, k, cp)
		var contrib, spend float64
		for t := range m {
			contrib += cp.BetaAt(t) * m[t] // Beta unless the effectiveness drifts
			spend += d.Spend[k][t]
		}
		totalSpend += spend
		totalContrib += contrib
		s := ChannelSummary{Name: c.Name, Contribution: contrib, CurrentSpend: cur[k]}
		if spend > 0 {
			s.ROI = contrib * valuePerKPI / spend
		}
		curve := d.NewCurve(k, cp, d.Spec.Horizon)
		_, dr := curve.Eval(cur[k])
		s.MROI = dr / float64(d.Spec.Horizon) * valuePerKPI
		s.HalfLifeWeeks = halfLife(c, cp)
		g, _, _ := kernelSum(c, cp)
		s.Saturation = saturate(c.Saturation, cur[k]*g, d.HalfSatLevel(k, cp), cp.Shape)
		s.Contribution = contrib
		out[k] = s
		out[k].SpendShare = spend
	}
	for k := range out {
		out[k].SpendShare /= totalSpend
		if totalContrib > 0 {
			out[k].ContributionShare = out[k].Contribution / totalContrib
		}
	}
	return out
}

// kernelSum is the total weight G of the adstock kernel (the steady-state
// adstock of one unit of weekly spend) and its derivatives with respect to
// the decay λ and the peak θ.
func kernelSum(c ChannelSpec, cp ChannelParams) (g, dl, dp float64) {
	if c.Adstock == AdstockDelayed {
		for l := range c.MaxLag {
			w := DelayedWeight(l, cp.Decay, cp.Peak)
			g += w
			if cp.Decay > 0 {
				d := float64(l) - cp.Peak
				dl += d * d * w / cp.Decay
				dp += -2 * d * math.Log(cp.Decay) * w
			}
		}
		return g, dl, dp
	}
	r := 1 / (1 - cp.Decay)
	return r, r * r, 0
}

// HalfSatLevel is the adstock level at which channel k's response is half
// saturated: K = κ · m · G, with m the mean weekly spend and G the kernel's
// total weight. Scaling by G makes κ the multiple of the steady-state
// adstock of mean spend, so κ = 1 means "half saturated at mean spend"
// whatever the carryover, and decay and κ do not trade off.
func (d *Design) HalfSatLevel(k int, cp ChannelParams) float64 {
	g, _, _ := kernelSum(d.Spec.Channels[k], cp)
	return cp.HalfSat * d.MeanSpend[k] * g
}

// halfLife is the geometric half-life, or for the delayed kernel the lag
// after its peak at which the weight falls to half: θ + sqrt(ln 0.5/ln λ).
func halfLife(c ChannelSpec, cp ChannelParams) float64 {
	if c.Adstock == AdstockDelayed {
		if cp.Decay <= 0 {
			return cp.Peak
		}
		return cp.Peak + math.Sqrt(math.Log(0.5)/math.Log(cp.Decay))
	}
	return HalfLife(cp.Decay)
}

// Stats are in-sample fit statistics.
type Stats struct {
	R2           float64 `json:"r2"`
	WMAPE        float64 `json:"wmape"` // Σ|e| / Σ|y|
	Sigma        float64 `json:"sigma"` // residual SD, √(SSE/(n − parameters))
	DurbinWatson float64 `json:"durbin_watson"`
}

// FitStats computes in-sample statistics of residuals e against y with
// nparams estimated parameters.
func FitStats(y, e []float64, nparams int) Stats {
	var mean float64
	for _, v := range y {
		mean += v
	}
	mean /= float64(len(y))
	var sse, sst, sae, say, dw float64
	for t, v := range e {
		sse += v * v
		sst += (y[t] - mean) * (y[t] - mean)
		sae += math.Abs(v)
		say += math.Abs(y[t])
		if t > 0 {
			dw += (v - e[t-1]) * (v - e[t-1])
		}
	}
	st := Stats{R2: 1 - sse/sst, WMAPE: sae / say}
	if dof := len(y) - nparams; dof > 0 {
		st.Sigma = math.Sqrt(sse / float64(dof))
	}
	if sse > 0 {
		st.DurbinWatson = dw / sse
	}
	return st
}

// SupportWeeks is the window of the averages that describe the spend the
// data has seen (the gate's support guard).
const SupportWeeks = 4

// Support returns, per channel, the lowest and the highest average weekly
// spend over any SupportWeeks consecutive weeks of the data. Each window is
// summed afresh (no running sum): a running sum s += x[t] - x[t-w] drifts by
// round-off and can end below zero after a run of zero weeks, while a sum of
// non-negative spends is exactly >= 0 and exactly 0 over an all-zero window.
func (d *Design) Support() (low, high []float64) {
	low = make([]float64, len(d.Spend))
	high = make([]float64, len(d.Spend))
	for k, x := range d.Spend {
		w := min(SupportWeeks, len(x))
		if w == 0 {
			continue
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		for t := w; t <= len(x); t++ {
			var s float64
			for _, v := range x[t-w : t] {
				s += v
			}
			lo, hi = math.Min(lo, s), math.Max(hi, s)
		}
		low[k], high[k] = lo/float64(w), hi/float64(w)
	}
	return low, high
}
