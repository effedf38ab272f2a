package model

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// AR1 against the stationary AR(1) closed form (Box & Jenkins: variance
// σ²/(1−φ²) = 1 here, lag-1 autocorrelation φ): over 200,000 values the
// sample figures lie within 0.02 of them. Their standard errors (from
// memory of Bartlett's formulas: √(2(1+φ²)/((1−φ²)n)) for the variance,
// √((1−φ²)/n) for the autocorrelation) are at most 0.007 for |φ| ≤ 0.8, so
// 0.02 is about three of them.
func TestAR1ClosedForm(t *testing.T) {
	const n = 200000
	for _, phi := range []float64{0, 0.5, -0.3, 0.8} {
		z := AR1(rand.New(rand.NewPCG(7, 1)), n, phi)
		v := stat.Variance(z, nil)
		r := stat.Correlation(z[1:], z[:n-1], nil)
		if math.Abs(v-1) > 0.02 || math.Abs(r-phi) > 0.02 {
			t.Errorf("φ %v: variance %.4f (want 1), lag-1 autocorrelation %.4f (want %v)", phi, v, r, phi)
		}
	}
	if len(AR1(rand.New(rand.NewPCG(1, 1)), 0, 0.5)) != 0 {
		t.Error("n = 0 must give an empty series")
	}
}
