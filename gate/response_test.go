package gate

import (
	"math"
	"math/rand/v2"
)

// curveResponse is a synthetic family of horizon responses for tests and
// benchmarks (invented data): channel k under draw d spends w per week for
// spendWeeks weeks, its geometric adstock a_t = x_t + λ a_{t−1} starts from a
// carried-over state, and over weeks 1..weeks the KPI gains
// β Σ_t sat(a_t) − β Σ_t sat(carry_t), with sat a Hill curve
// a^s/(a^s + K^s) or the exponential 1 − exp(−a/K) (README.md, "Model" and
// "Horizon response"). Each Eval costs one pow (or exp) per week.
type curveResponse struct {
	nd, nch int
	draws   []curveDraw // [d*nch+k]
}

type curveDraw struct {
	beta, halfSat, shape float64
	exp                  bool
	lambda, steady       float64 // adstock decay and the state it starts from

	carry, gain []float64 // carry_t and ∂a_t/∂w
	base        float64   // Σ_t sat(carry_t)
}

const (
	spendWeeks = 13
	weeks      = 26 // the horizon plus a carryover tail
)

// channelSpec describes a test channel: the marginal ROI at current spend
// (per currency unit spent over the horizon) is drawn per draw as
// roi + roiSD·z, the curve parameters are jittered by ±jitter.
type channelSpec struct {
	name          string
	current, high float64 // current weekly spend; highest 4-week average seen
	roi, roiSD    float64
	halfSat       float64 // half-saturation, as a multiple of the adstocked current spend
	shape, lambda float64
	exp           bool
}

func (c channelSpec) support() SupportRange { return SupportRange{Low: 0.7 * c.current, High: c.high} }

// newCurves draws nd draws for specs with seed.
func newCurves(seed uint64, nd int, specs []channelSpec) *curveResponse {
	rng := rand.New(rand.NewPCG(seed, 0x5eed))
	r := &curveResponse{nd: nd, nch: len(specs), draws: make([]curveDraw, nd*len(specs))}
	jit := func(x float64) float64 { return x * (1 + 0.1*(2*rng.Float64()-1)) }
	for d := range nd {
		for k, s := range specs {
			lam := min(jit(s.lambda), 0.95)
			steady := s.current / (1 - lam)
			cd := curveDraw{halfSat: jit(s.halfSat) * steady, shape: jit(s.shape), exp: s.exp, lambda: lam, steady: steady,
				carry: make([]float64, weeks), gain: make([]float64, weeks)}
			var g float64
			for t := range weeks {
				cd.carry[t] = steady * math.Pow(lam, float64(t+1))
				g *= lam
				if t < spendWeeks {
					g++
				}
				cd.gain[t] = g
			}
			cd.beta = 1
			cd.base = 0
			for t := range weeks {
				cd.base += cd.sat(cd.carry[t])
			}
			_, dr := cd.eval(s.current)
			roi := s.roi + s.roiSD*rng.NormFloat64()
			cd.beta = roi * spendWeeks / dr // marginal ROI at current = roi
			r.draws[d*len(specs)+k] = cd
		}
	}
	return r
}

func (c *curveDraw) sat(a float64) float64 {
	if c.exp {
		return 1 - math.Exp(-a/c.halfSat)
	}
	p := math.Pow(a/c.halfSat, c.shape)
	return p / (1 + p)
}

// eval returns β(Σ sat(a_t) − base) and its derivative in w.
func (c *curveDraw) eval(w float64) (r, dr float64) {
	for t := range weeks {
		a := c.carry[t] + w*c.gain[t]
		if c.exp {
			e := math.Exp(-a / c.halfSat)
			r += 1 - e
			dr += e / c.halfSat * c.gain[t]
			continue
		}
		x := a / c.halfSat
		p := math.Pow(x, c.shape)
		r += p / (1 + p)
		if a > 0 {
			dr += c.shape * p / (a * (1 + p) * (1 + p)) * c.gain[t]
		}
	}
	return c.beta * (r - c.base), c.beta * dr
}

func (r *curveResponse) NumDraws() int    { return r.nd }
func (r *curveResponse) NumChannels() int { return r.nch }
func (r *curveResponse) Eval(d, k int, w float64) (float64, float64) {
	return r.draws[d*r.nch+k].eval(w)
}

// linearResponse is R_dk(w) = slope[d][k]·w, for hand-checkable gains.
type linearResponse struct{ slope [][]float64 }

func (l linearResponse) NumDraws() int    { return len(l.slope) }
func (l linearResponse) NumChannels() int { return len(l.slope[0]) }
func (l linearResponse) Eval(d, k int, w float64) (float64, float64) {
	return l.slope[d][k] * w, l.slope[d][k]
}
