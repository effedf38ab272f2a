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
