package optimize

import (
	"math"
	"math/rand/v2"
)

var inf = math.Inf(1)

// curves is a Response from closed-form saturation curves with parameters
// per draw and channel: R_dk(w) = β_dk · a^s/(a^s + K^s) (Hill, S-shaped
// for s > 1) or β_dk · (1 − exp(−a/K)) (exponential), with a = w.
type curves struct {
	beta, K, S [][]float64 // [draw][channel]; S is the Hill shape
	hill       []bool      // per channel
}

func (c *curves) NumDraws() int    { return len(c.beta) }
func (c *curves) NumChannels() int { return len(c.hill) }

func (c *curves) Eval(d, k int, w float64) (r, dr float64) {
	b, K := c.beta[d][k], c.K[d][k]
	if !c.hill[k] {
		e := math.Exp(-w / K)
		return b * (1 - e), b / K * e
	}
	s := c.S[d][k]
	if w <= 0 {
		if s == 1 {
			return 0, b / K
		}
		return 0, 0
	}
	xs := math.Pow(w/K, s) // (w/K)^s: Hill w^s/(w^s+K^s) = xs/(xs+1)
	den := xs + 1
	return b * xs / den, b * s * xs / (w * den * den)
}

// mean returns the one-draw Response whose parameters are the draws' means.
func (c *curves) mean() *curves {
	n := c.NumChannels()
	m := &curves{hill: c.hill, beta: [][]float64{make([]float64, n)}, K: [][]float64{make([]float64, n)}, S: [][]float64{make([]float64, n)}}
	for d := range c.beta {
		for k := range n {
			m.beta[0][k] += c.beta[d][k] / float64(len(c.beta))
			m.K[0][k] += c.K[d][k] / float64(len(c.beta))
			m.S[0][k] += c.S[d][k] / float64(len(c.beta))
		}
	}
	return m
}

// randomCurves draws D draws of n channels around typical parameters: scale
// is the channels' typical weekly spend, roi the typical return at scale.
// Channels with hill[k] get shapes in [1, sMax].
func randomCurves(rng *rand.Rand, draws int, hill []bool, scale, sMax float64) *curves {
	n := len(hill)
	c := &curves{hill: hill}
	bk := make([]float64, n)
	kk := make([]float64, n)
	sk := make([]float64, n)
	for k := range n {
		kk[k] = scale * (0.5 + 1.5*rng.Float64())
		bk[k] = 13 * kk[k] * (1.5 + 3*rng.Float64())
		sk[k] = 1 + (sMax-1)*rng.Float64()
	}
	for range draws {
		b := make([]float64, n)
		K := make([]float64, n)
		S := make([]float64, n)
		for k := range n {
			b[k] = bk[k] * math.Exp(0.2*rng.NormFloat64())
			K[k] = kk[k] * math.Exp(0.15*rng.NormFloat64())
			S[k] = sk[k]
			if hill[k] {
				S[k] = max(1, sk[k]*math.Exp(0.1*rng.NormFloat64()))
			}
		}
		c.beta, c.K, c.S = append(c.beta, b), append(c.K, K), append(c.S, S)
	}
	return c
}

// carryover is a Response that costs what the model's does: each Eval sums a
// Hill curve over 26 weeks (13 horizon weeks and a 13-week tail) of the
// adstock a_t = carry_t + w·g_t, with geometric carryover λ, minus the same
// without the new spend — 26 pow calls per Eval, as the real model's.
type carryover struct {
	beta, K, S, lambda [][]float64 // [draw][channel]
	carry              [][][]float64
	base               [][]float64 // Σ_t Hill(carry_t), [draw][channel]
	gain               [][]float64 // g_t per channel lambda index: [draw*n+k][t]
}

const carryWeeks = 26

func newCarryover(rng *rand.Rand, draws, n int, scale float64) *carryover {
	c := &carryover{}
	mk := func(f func() float64) []float64 {
		x := make([]float64, n)
		for k := range x {
			x[k] = f()
		}
		return x
	}
	kk := mk(func() float64 { return scale * (1 + 2*rng.Float64()) })
	bk := mk(func() float64 { return 2 * scale * (1 + 3*rng.Float64()) })
	sk := mk(func() float64 { return 1 + 1.5*rng.Float64() })
	lk := mk(func() float64 { return 0.2 + 0.6*rng.Float64() })
	for range draws {
		b := make([]float64, n)
		K := make([]float64, n)
		S := make([]float64, n)
		L := make([]float64, n)
		carry := make([][]float64, n)
		base := make([]float64, n)
		for k := range n {
			b[k] = bk[k] * math.Exp(0.2*rng.NormFloat64())
			K[k] = kk[k] * math.Exp(0.15*rng.NormFloat64())
			S[k] = max(1, sk[k]*math.Exp(0.1*rng.NormFloat64()))
			L[k] = min(0.95, lk[k]*math.Exp(0.1*rng.NormFloat64()))
			// Adstock left at the end of the data decays through the 26 weeks.
			a0 := scale * (0.5 + rng.Float64()) / (1 - L[k])
			carry[k] = make([]float64, carryWeeks)
			for t := range carryWeeks {
				a0 *= L[k]
				carry[k][t] = a0
				x := math.Pow(a0/K[k], S[k])
				base[k] += x / (1 + x)
			}
		}
		c.beta, c.K, c.S, c.lambda = append(c.beta, b), append(c.K, K), append(c.S, S), append(c.lambda, L)
		c.carry = append(c.carry, carry)
		c.base = append(c.base, base)
		gains := make([][]float64, n)
		for k := range n {
			gains[k] = make([]float64, carryWeeks)
			var a float64
			for t := range carryWeeks {
				a *= L[k]
				if t < 13 {
					a++
				}
				gains[k][t] = a
			}
		}
		c.gain = append(c.gain, gains...)
	}
	return c
}

func (c *carryover) NumDraws() int    { return len(c.beta) }
func (c *carryover) NumChannels() int { return len(c.beta[0]) }

func (c *carryover) Eval(d, k int, w float64) (r, dr float64) {
	n := c.NumChannels()
	b, K, s := c.beta[d][k], c.K[d][k], c.S[d][k]
	g := c.gain[d*n+k]
	carry := c.carry[d][k]
	var sum, der float64
	for t := range carryWeeks {
		a := carry[t] + w*g[t]
		x := math.Pow(a/K, s)
		den := 1 + x
		sum += x / den
		der += g[t] * s * x / (a * den * den)
	}
	return b * (sum - c.base[d][k]), b * der
}
