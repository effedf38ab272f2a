package uncertainty

import (
	"context"
	"fmt"
	"runtime"
	"strconv"
	"testing"

	"sluice/model"
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

// benchTruth is an invented world of the given size for the refit
// benchmarks (not real data): channels with spread-out carryover, half
// saturation and shape, 5% AR(1) noise, a price control and a promo flag.
func benchTruth(weeks, channels int) *model.Truth {
	tr := &model.Truth{Seed: 2026, Weeks: weeks, Intercept: 400000, Trend: 20000, Season: 0.08,
		NoiseSD: 0.05, NoiseAR: 0.25,
		Controls: []model.TrueControl{{Name: "price_index", Mean: 1, SD: 0.04, AR: 0.8, Coef: -100000},
			{Name: "promo", OnShare: 0.15, Coef: 20000}}}
	for k := range channels {
		f := float64(k) / float64(max(channels-1, 1))
		c := model.TrueChannel{Name: "ch" + strconv.Itoa(k+1), MeanSpend: 10000 + 5000*float64(k%4),
			Variation: 0.7 + 0.2*f, Dark: 0.15 + 0.1*f, Decay: 0.1 + 0.4*f, HalfSat: 0.8 + 0.8*f,
			Shape: 1.2 + 0.4*f, Beta: 600000 / float64(channels) * (1 + f)}
		if k%4 == 3 {
			c.Saturation, c.Shape = model.SaturationExponential, 0
		}
		tr.Channels = append(tr.Channels, c)
	}
	return tr
}

// Warm-started refits per second (replicates done / wall time, retries of
// the replicates that need them included) and memory per replicate, on
// 156 weeks × 6 channels and 312 weeks × 12 channels, with 1 and 2
// workers. One op is a bootstrap of `batch` replicates after the full fit.
func BenchmarkRefits(b *testing.B) {
	for _, size := range []struct{ weeks, channels, batch int }{{156, 6, 40}, {312, 12, 10}} {
		tr := benchTruth(size.weeks, size.channels)
		sim, err := model.Simulate(tr)
		if err != nil {
			b.Fatal(err)
		}
		d, err := model.NewDesign(sim.Panel, tr.Spec())
		if err != nil {
			b.Fatal(err)
		}
		full, err := d.Fit(sim.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
		if err != nil {
			b.Fatal(err)
		}
		for _, workers := range []int{1, 2} {
			name := fmt.Sprintf("weeks=%d/channels=%d/workers=%d", size.weeks, size.channels, workers)
			b.Run(name, func(b *testing.B) {
				bs := &Bootstrap{Design: d, Y: sim.Panel.KPI, Draws: size.batch, Seed: 7, Full: full, Workers: workers}
				var ms0, ms1 runtime.MemStats
				runtime.ReadMemStats(&ms0)
				var failed, retried int
				for b.Loop() {
					dr, err := bs.Run(context.Background())
					if err != nil {
						b.Fatal(err)
					}
					a := dr.Attempts()
					failed, retried = dr.Failed(), a[1]+a[2]
				}
				runtime.ReadMemStats(&ms1)
				draws := float64(b.N * size.batch)
				b.ReportMetric(draws/b.Elapsed().Seconds(), "refits/s")
				b.ReportMetric(float64(ms1.TotalAlloc-ms0.TotalAlloc)/draws, "B/refit")
				b.ReportMetric(float64(failed), "failed/batch")
				b.ReportMetric(float64(retried), "continued/batch")
			})
		}
	}
}

// Cost of one objective evaluation of a warm refit (the Jacobian step
// included) as weeks and channels grow: each op is one refit of a fixed
// resampled KPI with a budget of 25 evaluations.
func BenchmarkRefitEvaluation(b *testing.B) {
	for _, size := range [][2]int{{156, 6}, {312, 6}, {156, 12}, {312, 12}} {
		tr := benchTruth(size[0], size[1])
		sim, err := model.Simulate(tr)
		if err != nil {
			b.Fatal(err)
		}
		d, err := model.NewDesign(sim.Panel, tr.Spec())
		if err != nil {
			b.Fatal(err)
		}
		full, err := d.Fit(sim.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
		if err != nil {
			b.Fatal(err)
		}
		e := Resampler{BlockLength: 3}.Residuals(make([]float64, d.N), full.Residuals, Stream(1, 0))
		for t := range e {
			e[t] += full.Fitted[t]
		}
		b.Run(fmt.Sprintf("weeks=%d/channels=%d", size[0], size[1]), func(b *testing.B) {
			b.ReportAllocs()
			evals := 0
			for b.Loop() {
				fr, err := d.Fit(e, model.FitSettings{Warm: &full.Params, MaxEvaluations: 25})
				if err != nil {
					b.Fatal(err)
				}
				evals += fr.Evaluations
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(evals)/1e6, "ms/eval")
			b.ReportMetric(float64(evals)/float64(b.N), "evals/op")
		})
	}
}

// A bootstrap of 200 replicates (full fit given, 2 workers) against 40 cold
// multi-start fits (the spec's 6 starts each, 2 workers) on 156 weeks × 6
// channels: the bootstrap must cost less than the cold fits.
func BenchmarkBootstrapVsColdFits(b *testing.B) {
	tr := benchTruth(156, 6)
	sim, err := model.Simulate(tr)
	if err != nil {
		b.Fatal(err)
	}
	d, err := model.NewDesign(sim.Panel, tr.Spec())
	if err != nil {
		b.Fatal(err)
	}
	full, err := d.Fit(sim.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		b.Fatal(err)
	}
	b.Run("bootstrap200", func(b *testing.B) {
		for b.Loop() {
			bs := &Bootstrap{Design: d, Y: sim.Panel.KPI, Draws: 200, Seed: 7, Full: full, Workers: 2}
			if _, err := bs.Run(context.Background()); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("bootstrap200warm", func(b *testing.B) {
		for b.Loop() {
			bs := &Bootstrap{Design: d, Y: sim.Panel.KPI, Draws: 200, Seed: 7, Full: full, Workers: 2, RefitStarts: 1}
			if _, err := bs.Run(context.Background()); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("coldfits40", func(b *testing.B) {
		for b.Loop() {
			for i := range 40 {
				if _, err := d.Fit(sim.Panel.KPI, model.FitSettings{Seed: uint64(i), Workers: 2}); err != nil {
					b.Fatal(err)
				}
			}
		}
	})
}

// A bootstrap of 1000 replicates after the full fit, 2 workers: 156 weeks ×
// 6 channels (goal ≤ 5 s) and 312 × 12 (goal ≤ 60 s). Slow: run with
// -bench Bootstrap1000 -benchtime 1x.
func BenchmarkBootstrap1000(b *testing.B) {
	for _, size := range [][2]int{{156, 6}, {312, 12}} {
		tr := benchTruth(size[0], size[1])
		sim, err := model.Simulate(tr)
		if err != nil {
			b.Fatal(err)
		}
		d, err := model.NewDesign(sim.Panel, tr.Spec())
		if err != nil {
			b.Fatal(err)
		}
		full, err := d.Fit(sim.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprintf("%dx%d", size[0], size[1]), func(b *testing.B) {
			var failed int
			for b.Loop() {
				bs := &Bootstrap{Design: d, Y: sim.Panel.KPI, Draws: 1000, Seed: 7, Full: full, Workers: 2}
				dr, err := bs.Run(context.Background())
				if err != nil {
					b.Fatal(err)
				}
				failed = dr.Failed()
			}
			b.ReportMetric(float64(failed), "failed")
		})
	}
}
