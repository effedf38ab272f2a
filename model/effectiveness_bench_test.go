package model

import (
	"math/rand/v2"
	"syscall"
	"testing"
)

// cpuSeconds is the process's user and system CPU time so far: on a
// machine shared with other work it moves far less than the wall clock.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9
}

// BenchmarkEffect compares the constant and the all-drifting model on the
// 156×6 bench panel: one full fit (6 starts, one worker; the drifting one
// includes its constant pilot) and 1000 bootstrap-style refits (residuals
// resampled with a seeded stream, warm start from the full fit, the full
// fit's priors and σ, as uncertainty's replicates refit). drifting2 has
// two of the six channels drifting (what the evidence typically names),
// drifting all six. The goal is the drifting model within 3× the constant
// one.
//
// Besides the wall time it reports cpu-s/op, the CPU time per iteration,
// steadier on a shared machine.
//
//	go test ./model -run '^$' -bench Effect -benchtime 1x -count 3 -cpu 2 -timeout 60m
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
			c0 := cpuSeconds()
			defer func() { b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op") }()
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
			c0 := cpuSeconds()
			defer func() { b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op") }()
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
