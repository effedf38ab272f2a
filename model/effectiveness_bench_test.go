package model

import (
	"math/rand/v2"
	"testing"
)

// BenchmarkEffect compares the constant and the all-drifting model on the
// 156×6 bench panel: one full fit (6 starts, one worker; the drifting one
// includes its constant pilot) and 1000 bootstrap-style refits (residuals
// resampled with a seeded stream, warm start from the full fit, the full
// fit's priors and σ, as uncertainty's replicates refit). drifting2 has
// two of the six channels drifting (what the evidence typically names),
// drifting all six. The goal is the drifting model within 3× the constant
// one.
//
//	go test ./model -run '^$' -bench Effect -benchtime 1x -count 5 -cpu 2
//
// refits is the replicates per iteration of the refits benchmark.
var refits = 1000

func BenchmarkEffect(b *testing.B) {
	for _, v := range []struct {
		name     string
		drifting []string
	}{{"constant", nil}, {"drifting2", []string{"ch00", "ch03"}}, {"drifting", []string{"all"}}} {
		name := v.name
		d, y := benchWorld(b, 156, 6)
		if v.drifting != nil {
			var err error
			if d, err = d.WithDrifting(v.drifting); err != nil {
				b.Fatal(err)
			}
		}
		b.Run(name+"/fit", func(b *testing.B) {
			for range b.N {
				if _, err := d.Fit(y, FitSettings{Seed: 1, Workers: 1}); err != nil {
					b.Fatal(err)
				}
			}
		})
		b.Run(name+"/refits1000", func(b *testing.B) {
			full, err := d.Fit(y, FitSettings{Seed: 1, Workers: 1})
			if err != nil {
				b.Fatal(err)
			}
			b.ResetTimer()
			for range b.N {
				for i := range refits {
					rng := rand.New(rand.NewPCG(7, uint64(i)))
					ys := make([]float64, d.N)
					for t := range ys {
						ys[t] = full.Fitted[t] + full.Residuals[rng.IntN(d.N)]
					}
					warm := full.Params.Clone()
					if _, err := d.Fit(ys, FitSettings{Warm: &warm, Priors: full.Priors, NoiseSD: full.NoiseSD}); err != nil {
						b.Fatal(err)
					}
				}
			}
		})
	}
}
