package model

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat"
)

// AR1 returns n values of a stationary AR(1) series with unit variance,
// z_t = φ z_{t−1} + √(1−φ²) ε_t with z_0 and ε_t standard normal from rng.
// It is the one AR(1) generator of the project: the simulator's spend,
// controls and noise and the rehearsal's worlds draw from it.
func AR1(rng *rand.Rand, n int, phi float64) []float64 {
	z := make([]float64, n)
	if n == 0 {
		return z
	}
	s := math.Sqrt(1 - phi*phi)
	z[0] = rng.NormFloat64()
	for i := 1; i < n; i++ {
		z[i] = phi*z[i-1] + s*rng.NormFloat64()
	}
	return z
}

// meanOf is the arithmetic mean (gonum/stat).
func meanOf(x []float64) float64 { return stat.Mean(x, nil) }
