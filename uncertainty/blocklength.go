package uncertainty

import "math"

// BlockLengthResult is the automatic block length of a series.
type BlockLengthResult struct {
	// Stationary is b_SB, the mean block length for the stationary bootstrap.
	Stationary float64
	// Circular is b_CB, the block length for the circular block bootstrap,
	// not yet rounded up. It also serves the moving-block bootstrap, whose
	// variance estimator has the same leading bias and variance constants
	// (Politis & White 2004).
	Circular float64
	// MHat is m̂, the lag after which the autocorrelations become
	// insignificant; M = min(2 m̂, m_max) is the flat-top window's bandwidth.
	MHat, M int
}

// AutoBlockLength estimates the MSE-optimal block lengths of x by Politis &
// White (2004), with the D_SB of the correction by Patton, Politis & White
// (2009), following the authors' reference code where the paper's wording
// differs (m̂ below):
//
//	R(k)  = (1/n) Σ_{t=1}^{n−|k|} (x_t − x̄)(x_{t+|k|} − x̄),  ρ(k) = R(k)/R(0)
//	K_N   = max(5, ⌈√log10 n⌉),  c = 2,  band c·√(log10(n)/n)
//	m_max = ⌈√n⌉ + K_N,  b_max = ⌈min(3√n, n/3)⌉
//	m̂     = smallest m ≥ 1 with |ρ(m+k)| inside the band for k = 0..K_N−1;
//	        if none, the largest significant lag ≤ m_max (1 if none)
//	M     = min(2m̂, m_max),  λ(t) = 1 (|t| ≤ ½), 2(1−|t|) (½ < |t| ≤ 1), 0
//	G     = Σ_{|k|≤M} λ(k/M)|k|R(k),  g(0) = Σ_{|k|≤M} λ(k/M)R(k)
//	D_SB  = 2g(0)²,  D_CB = (4/3)g(0)²
//	b     = min((2G²/D)^(1/3) n^(1/3), b_max)
//
// The flat-top window is that of Politis & Romano (1995). b can fall below 1
// for a series with little or negative dependence; Resampler treats that
// as 1. A series shorter than 2, or constant, shows no measurable dependence:
// the result is then block length 1 with MHat and M zero.
func AutoBlockLength(x []float64) BlockLengthResult {
	n := len(x)
	if n < 2 {
		return BlockLengthResult{Stationary: 1, Circular: 1}
	}
	nf := float64(n)
	var mean float64
	for _, v := range x {
		mean += v
	}
	mean /= nf

	kn := max(5, int(math.Ceil(math.Sqrt(math.Log10(nf)))))
	mMax := int(math.Ceil(math.Sqrt(nf))) + kn
	bMax := math.Ceil(min(3*math.Sqrt(nf), nf/3))
	band := 2 * math.Sqrt(math.Log10(nf)/nf)

	// Autocovariances up to m_max: the search, the fallback and M need no
	// more. Lags at or beyond n have no pairs and are zero.
	r := make([]float64, mMax+1)
	for k := range r {
		var s float64
		for t := 0; t+k < n; t++ {
			s += (x[t] - mean) * (x[t+k] - mean)
		}
		r[k] = s / nf
	}
	if r[0] == 0 {
		return BlockLengthResult{Stationary: 1, Circular: 1}
	}
	insignificant := func(k int) bool { return math.Abs(r[k]/r[0]) < band }

	mHat := 0
search:
	for m := 1; m <= mMax-kn+1; m++ {
		for k := range kn {
			if !insignificant(m + k) {
				continue search
			}
		}
		mHat = m
		break
	}
	if mHat == 0 {
		mHat = 1
		for k := mMax; k >= 1; k-- {
			if math.Abs(r[k]/r[0]) > band {
				mHat = k
				break
			}
		}
	}
	bigM := min(2*mHat, mMax)

	g0, bigG := r[0], 0.0
	for k := 1; k <= bigM; k++ {
		w := flatTop(float64(k) / float64(bigM))
		g0 += 2 * w * r[k]
		bigG += 2 * w * float64(k) * r[k]
	}
	dSB := 2 * g0 * g0
	dCB := 4.0 / 3 * g0 * g0
	cbrtN := math.Cbrt(nf)
	return BlockLengthResult{
		Stationary: min(math.Cbrt(2*bigG*bigG/dSB)*cbrtN, bMax),
		Circular:   min(math.Cbrt(2*bigG*bigG/dCB)*cbrtN, bMax),
		MHat:       mHat,
		M:          bigM,
	}
}

// flatTop is the trapezoidal flat-top lag window of Politis & Romano (1995).
func flatTop(t float64) float64 {
	t = math.Abs(t)
	switch {
	case t <= 0.5:
		return 1
	case t <= 1:
		return 2 * (1 - t)
	}
	return 0
}

// RegressionBlock is the block length chosen for a regression's residuals
// (RegressionBlockLength).
type RegressionBlock struct {
	Lag1   float64 `json:"lag1"`   // ρ̂, the residuals' lag-1 autocorrelation
	Length float64 `json:"length"` // the block length used, ≥ 1, ≤ Cap
	Rule   float64 `json:"rule"`   // the rule's value before the cap
	Cap    float64 `json:"cap"`
	Capped bool    `json:"capped"` // the cap bound: the residuals are more dependent than the rule trusts
}

// RegressionBlockLength chooses the moving-block length for the residuals
// of a fitted regression by the AR(1) plug-in rule: the MSE-optimal block
// length of the (circular or moving) block bootstrap for the variance of a
// mean, b = (2G²/D)^(1/3) n^(1/3) with D = (4/3) g(0)² (Politis & White
// 2004; Lahiri 2003 ch. 7 — from memory), evaluated for an AR(1) series of
// coefficient ρ, where G/g(0) = 2ρ/(1 − ρ²):
//
//	b = (3n/2)^(1/3) · (2|ρ̂| / (1 − ρ̂²))^(2/3),   ρ̂ = R(1)/R(0),
//
// rounded up, at least 1, capped at ⌈2 n^(1/3)⌉ (at most n/4).
//
// Why not the nonparametric Politis–White rule (AutoBlockLength): fitted
// residuals of a model with tens of parameters carry small spurious
// autocorrelations at many lags; the flat-top window then counts them as
// dependence and the block length runs to its cap (38 of 156 weeks at a
// lag-1 autocorrelation of 0.09), which starves the bootstrap of distinct
// blocks. The plug-in rule reads the one dependence a weekly model leaves
// (carryover it missed), and the cap (common practice, no source: twice
// the rate-optimal order n^(1/3)) keeps at least n/cap distinct blocks; a
// binding cap is reported (Capped) so the user hears that the residuals
// are more dependent than the rule is trusted for.
func RegressionBlockLength(e []float64) RegressionBlock {
	n := len(e)
	nf := float64(n)
	cp := math.Max(1, math.Min(math.Ceil(2*math.Cbrt(nf)), math.Floor(nf/4)))
	if n < 3 {
		return RegressionBlock{Length: 1, Rule: 1, Cap: cp}
	}
	var m float64
	for _, v := range e {
		m += v
	}
	m /= nf
	var r0, r1 float64
	for t, v := range e {
		r0 += (v - m) * (v - m)
		if t > 0 {
			r1 += (v - m) * (e[t-1] - m)
		}
	}
	if r0 == 0 {
		return RegressionBlock{Length: 1, Rule: 1, Cap: cp}
	}
	rho := r1 / r0
	a := math.Min(math.Abs(rho), 0.99)
	rule := math.Cbrt(1.5*nf) * math.Pow(2*a/(1-a*a), 2.0/3)
	b := RegressionBlock{Lag1: rho, Rule: rule, Cap: cp}
	b.Length = math.Max(1, math.Ceil(rule))
	if b.Length > cp {
		b.Length, b.Capped = cp, true
	}
	return b
}
