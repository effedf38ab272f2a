package uncertainty

import (
	"context"
	"testing"
	"time"

	"sluice/model"
)

// Coverage on simulated data with a known truth: the central 90% percentile
// interval of each channel's ROI, from a moving-block residual bootstrap
// with the automatic block length, should contain the true ROI in about
// 90% of channel–world pairs. The bootstrap of a nonlinear, bounded fit is
// known to under-cover in small samples (Hall 1992, The Bootstrap and
// Edgeworth Expansion, ch. 3, from memory; parameters at their bounds break
// the bootstrap's consistency, Andrews 2000, from memory), so the
// acceptance level is 75% (the project's criterion, common practice, no
// source). The world is invented (testdata/coverage_truth.yaml: 156 weeks,
// 4 channels, 5% AR(1) noise); 40 worlds differ in their seed. To stay
// within about half a minute on 2 cores each bootstrap has 100 replicates
// instead of the default 1000 (each refit now has three starts), which
// makes the interval ends noisier but does not bias coverage much.
// Measured with the MAP fit, inflated residuals, the AR(1) block rule and
// redrawn prior centres: 142 of 160 pairs (88.8%); the basic interval,
// logged for comparison, covers less (80.0%). The wider study over 48 worlds of 11 kinds is
// study/calibration_test.go.
func TestCoverageOfROIIntervals(t *testing.T) {
	if testing.Short() {
		t.Skip("40 bootstraps of 100 refits")
	}
	base, err := model.LoadTruth("testdata/coverage_truth.yaml")
	if err != nil {
		t.Fatal(err)
	}
	const worlds, draws = 40, 100
	covered, basic, pairs, failed, total := 0, 0, 0, 0, 0
	start := time.Now()
	byChannel := map[string]int{}
	for w := range worlds {
		tr := *base
		tr.Seed = uint64(100 + w)
		sim, err := model.Simulate(&tr)
		if err != nil {
			t.Fatal(err)
		}
		d, err := model.NewDesign(sim.Panel, tr.Spec())
		if err != nil {
			t.Fatal(err)
		}
		b := &Bootstrap{Design: d, Y: sim.Panel.KPI, Draws: draws, Seed: uint64(w + 1), Workers: 2}
		dr, err := b.Run(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		failed += dr.Failed()
		total += len(dr.Replicates)
		bands := SummarizeDraws(d, dr.Params(), 1)
		point := d.Summarize(dr.Header.FullFit.Params, 1)
		for k, s := range sim.Summary {
			in := bands[k].ROI.P05 <= s.ROI && s.ROI <= bands[k].ROI.P95
			pairs++
			if in {
				covered++
				byChannel[s.Name]++
			}
			// The basic interval [2θ̂ − q95, 2θ̂ − q05] reflects the bootstrap
			// distribution about the point estimate (Davison & Hinkley
			// 1997, §5.2, from memory); logged for comparison only.
			r := point[k].ROI
			if 2*r-bands[k].ROI.P95 <= s.ROI && s.ROI <= 2*r-bands[k].ROI.P05 {
				basic++
			}
			t.Logf("world %2d %-11s true ROI %.3f  90%% [%.3f, %.3f] median %.3f  %v", w, s.Name, s.ROI,
				bands[k].ROI.P05, bands[k].ROI.P95, bands[k].ROI.Median, in)
		}
		t.Logf("world %2d: full fit %s, block length %.2f, %d of %d replicates failed, converged at attempt 1/2/3: %v",
			w, dr.Header.FullFit.Status, dr.Header.BlockLength, dr.Failed(), len(dr.Replicates), dr.Attempts())
	}
	share := float64(covered) / float64(pairs)
	for _, c := range base.Channels {
		t.Logf("%-11s covered in %d of %d worlds", c.Name, byChannel[c.Name], worlds)
	}
	t.Logf("90%% ROI intervals cover the truth in %d of %d channel–world pairs (%.1f%%; basic intervals %.1f%%); %d of %d replicates failed; %v",
		covered, pairs, 100*share, 100*float64(basic)/float64(pairs), failed, total, time.Since(start).Round(time.Second))
	if share < 0.75 {
		t.Errorf("coverage %.1f%% below 75%%", 100*share)
	}
}
