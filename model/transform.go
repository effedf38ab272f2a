package model

import "math"

// Geometric writes the geometric adstock a_t = x_t + λ a_{t−1} (a_{−1} = 0)
// of x into dst and returns dst. dst may not alias x.
func Geometric(dst, x []float64, lambda float64) []float64 {
	var a float64
	for t, v := range x {
		a = v + lambda*a
		dst[t] = a
	}
	return dst
}

// GeometricDecayDeriv writes ∂a_t/∂λ of the geometric adstock a (as returned
// by Geometric) into dst: d_t = a_{t−1} + λ d_{t−1}.
func GeometricDecayDeriv(dst, a []float64, lambda float64) []float64 {
	var d, prev float64
	for t := range a {
		d = prev + lambda*d
		dst[t] = d
		prev = a[t]
	}
	return dst
}

// DelayedWeight is the weight of lag l in the delayed-peak adstock of Jin et
// al. (2017, "Bayesian Methods for Media Mix Modeling with Carryover and
// Shape Effects"): λ^((l−θ)²), largest at the peak lag θ.
func DelayedWeight(l int, lambda, peak float64) float64 {
	if lambda == 0 {
		if float64(l) == peak {
			return 1
		}
		return 0
	}
	d := float64(l) - peak
	return math.Pow(lambda, d*d)
}

// Delayed writes the delayed-peak adstock a_t = Σ_{l<L} λ^((l−θ)²) x_{t−l}
// into dst. If dLambda or dPeak are not nil they receive ∂a/∂λ and ∂a/∂θ.
func Delayed(dst, dLambda, dPeak, x []float64, lambda, peak float64, maxLag int) []float64 {
	w := make([]float64, maxLag)
	wl := make([]float64, maxLag)
	wp := make([]float64, maxLag)
	for l := range maxLag {
		w[l] = DelayedWeight(l, lambda, peak)
		d := float64(l) - peak
		if lambda > 0 {
			wl[l] = d * d * w[l] / lambda
			wp[l] = -2 * d * math.Log(lambda) * w[l]
		}
	}
	for t := range x {
		var a, al, ap float64
		for l := 0; l < maxLag && l <= t; l++ {
			v := x[t-l]
			a += w[l] * v
			al += wl[l] * v
			ap += wp[l] * v
		}
		dst[t] = a
		if dLambda != nil {
			dLambda[t] = al
		}
		if dPeak != nil {
			dPeak[t] = ap
		}
	}
	return dst
}

// Hill returns a^s / (a^s + k^s) for a ≥ 0, k > 0, s > 0.
func Hill(a, k, s float64) float64 {
	if a <= 0 {
		return 0
	}
	// Written with the ratio so that large a/k does not overflow.
	return 1 / (1 + math.Pow(k/a, s))
}

// HillDerivs returns the Hill value h and its derivatives with respect to
// a, k and s.
func HillDerivs(a, k, s float64) (h, da, dk, ds float64) {
	if a <= 0 {
		return 0, 0, 0, 0
	}
	r := math.Pow(k/a, s)
	h = 1 / (1 + r)
	hh := h * (1 - h) // = r / (1+r)²
	da = s * hh / a
	dk = -s * hh / k
	ds = hh * math.Log(a/k)
	return
}

// Exponential returns 1 − exp(−a/k).
func Exponential(a, k float64) float64 {
	if a <= 0 {
		return 0
	}
	return -math.Expm1(-a / k)
}

// ExponentialDerivs returns the exponential saturation value and its
// derivatives with respect to a and k.
func ExponentialDerivs(a, k float64) (v, da, dk float64) {
	if a <= 0 {
		return 0, 0, 0
	}
	// The value as Exponential computes it (not 1 − e): a curve's R(0) is
	// the difference of the two, and must be exactly 0, never a round-off
	// negative.
	e := math.Exp(-a / k)
	return -math.Expm1(-a / k), e / k, -a / (k * k) * e
}

// HalfLife returns the number of weeks after which a geometric adstock
// weight falls to half: ln 0.5 / ln λ (0 for λ = 0).
func HalfLife(lambda float64) float64 {
	if lambda <= 0 {
		return 0
	}
	return math.Log(0.5) / math.Log(lambda)
}
