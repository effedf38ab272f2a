package uncertainty

import (
	"strconv"
	"testing"
)

// Residuals per replicate on 3 and 6 years of weekly residuals, block length
// from AutoBlockLength as the refit loop will use it.
func BenchmarkResiduals(b *testing.B) {
	for _, n := range []int{156, 312} {
		x := ar1(Stream(31, n), n, 0.5)
		bl := AutoBlockLength(x)
		for _, m := range methods {
			r := Resampler{Method: m, BlockLength: bl.Circular}
			if m == Stationary {
				r.BlockLength = bl.Stationary
			}
			b.Run(string(m)+"/n="+strconv.Itoa(n), func(b *testing.B) {
				dst := make([]float64, n)
				rng := Stream(32, 0)
				b.ReportAllocs()
				for b.Loop() {
					r.Residuals(dst, x, rng)
				}
			})
		}
	}
}

func BenchmarkAutoBlockLength(b *testing.B) {
	x := ar1(Stream(33, 0), 312, 0.5)
	b.ReportAllocs()
	for b.Loop() {
		AutoBlockLength(x)
	}
}
