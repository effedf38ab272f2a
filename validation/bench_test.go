package validation

import (
	"bytes"
	"fmt"
	"math/rand/v2"
	"testing"

	"sluice/examples"
	"sluice/model"
)

// benchProblem is the demo scenario (examples/weekly.csv, 156 weeks × 6
// channels, 2 controls; invented data).
func benchProblem(b *testing.B) Problem {
	b.Helper()
	raw, err := examples.Files.ReadFile("weekly.csv")
	if err != nil {
		b.Fatal(err)
	}
	p, err := model.ReadPanel(bytes.NewReader(raw), "weekly.csv",
		model.Columns{KPI: examples.KPI, Channels: examples.Channels, Controls: examples.Controls})
	if err != nil {
		b.Fatal(err)
	}
	d, err := model.NewDesign(p, model.NewSpec(examples.Channels, examples.Controls))
	if err != nil {
		b.Fatal(err)
	}
	return Problem{Panel: p, Design: d}
}

// BenchmarkValidate is a whole `sluice validate` run on 2 workers: the
// point fit, backtest, recovery, stability and drift (no lift tests, no
// records); with 1000 draws it adds the draw-based checks. The draws are
// the point fit with β and decay jittered (made outside the timer; the
// bootstrap that makes real ones is another package's work).
func BenchmarkValidate(b *testing.B) {
	set := Settings{Seed: 1, Workers: 2}
	b.Run("no_draws", func(b *testing.B) {
		prob := benchProblem(b)
		for b.Loop() {
			if _, err := Run(prob, DefaultThresholds(), set); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("draws_1000", func(b *testing.B) {
		prob := benchProblem(b)
		fit, err := prob.Design.Fit(prob.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
		if err != nil {
			b.Fatal(err)
		}
		rng := rand.New(rand.NewPCG(1, 2))
		draws := &Draws{}
		for range 1000 {
			p := fit.Params.Clone()
			for k := range p.Channels {
				p.Channels[k].Beta *= 1 + 0.2*rng.NormFloat64()
				p.Channels[k].Decay = min(0.85, max(0, p.Channels[k].Decay+0.05*rng.NormFloat64()))
			}
			draws.Params = append(draws.Params, p)
		}
		prob.Draws = draws
		for b.Loop() {
			if _, err := Run(prob, DefaultThresholds(), set); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// BenchmarkRecoverNull is the cost of the false-alarm simulation: the
// recovery check's panels alone (none) against the same panels also
// yielding the accuracy and quarter-out metrics of each (null), at the
// rehearsal's default 8 panels and propose's 20, on 2 workers.
func BenchmarkRecoverNull(b *testing.B) {
	prob := benchProblem(b)
	fit, err := prob.Design.Fit(prob.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		b.Fatal(err)
	}
	for _, r := range []int{8, 20} {
		set := Settings{Seed: 1, Workers: 2, Replicates: r}
		b.Run(fmt.Sprintf("panels_%d/none", r), func(b *testing.B) {
			for b.Loop() {
				if _, err := recoverWith(prob.Design, fit, set, nil); err != nil {
					b.Fatal(err)
				}
			}
		})
		b.Run(fmt.Sprintf("panels_%d/null", r), func(b *testing.B) {
			for b.Loop() {
				if _, err := recoverWith(prob.Design, fit, set, &nullValues{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
