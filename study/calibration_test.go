package study

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strings"
	"testing"
	"time"

	"sluice/internal/groundtruth"
	"sluice/internal/sample"
	"sluice/model"
)

// Calibration of the reported uncertainty against the truth of simulated
// worlds, over worlds of several kinds (48 in all):
//
//	clean          8  four channels, 156 weeks, 4% noise
//	confounded     6  channel c3 follows c1's spend and returns far less; no lift tests
//	confounded+lift 6 the same worlds with lift tests of c1 and c3 (8 weeks, se 15% of the true lift)
//	short-noisy    6  78 weeks, 9% noise
//	saturated      6  c0 always on and deep in saturation (κ 0.1–0.2)
//	misspecified  16  one assumption broken: drift (random-walk base), season
//	                  (4th harmonic), carryover (true delayed peak, fitted geometric),
//	                  shape (true exponential, fitted Hill), confounder (unobserved
//	                  demand moving with c1's spend), break (level shift)
//
// Each world: the MAP fit, a bootstrap of 100 replicates, the allocator's
// raw proposal (expected value, ±50% per channel, same total). The truth —
// ROI, the proposal's true gain — comes from package groundtruth. Reported:
// ROI 90% interval coverage (5–95% of the draws' ROI) and median width
// relative to the true ROI; the share of worlds whose true gain lies in the
// proposal's 90% gain band; P(loss) reliability (reported P(loss) binned,
// against the realised share of losing proposals).
//
// Rerun: go test ./study -run Calibration -v   (about a minute on 2 cores)
func TestCalibration(t *testing.T) {
	if testing.Short() {
		t.Skip("simulation study: 48 worlds")
	}
	start := time.Now()
	type row struct {
		kind                 string
		roiIn, roiN          int
		widths               []float64
		gainIn, gainN        int
		reportedPL, realised []float64
	}
	kinds := []struct {
		name string
		n    int
	}{{"clean", 8}, {"confounded", 6}, {"confounded+lift", 6}, {"short-noisy", 6}, {"saturated", 6},
		{"drift", 3}, {"season", 3}, {"carryover", 3}, {"shape", 3}, {"confounder", 2}, {"break", 2}}
	var rows []*row
	all := &row{kind: "all"}
	for _, k := range kinds {
		r := &row{kind: k.name}
		base := len(rows)
		if k.name == "confounded+lift" {
			base-- // the confounded worlds again, now with lift tests
		}
		for i := range k.n {
			seed := uint64(1000 + 37*base + i)
			sim, spec, lifts, w := makeWorld(t, k.name, seed)
			o := estimate(t, sim, spec, lifts, 100, seed, planFor(spec))
			// ROI bands from the draws (the estimate), truth from groundtruth.
			roi := make([][]float64, len(spec.Channels))
			for _, p := range o.draws {
				for c, s := range o.design.Summarize(p, 1) {
					roi[c] = append(roi[c], s.ROI)
				}
			}
			for c := range spec.Channels {
				x := slices.Clone(roi[c])
				sort.Float64s(x)
				lo, hi := sample.Quantile(x, 0.05, sample.Default), sample.Quantile(x, 0.95, sample.Default)
				truth := w.ROI(c)
				r.roiN++
				if truth >= lo && truth <= hi {
					r.roiIn++
				}
				r.widths = append(r.widths, (hi-lo)/truth)
			}
			g := slices.Clone(o.gains)
			sort.Float64s(g)
			glo, ghi := sample.Quantile(g, 0.05, sample.Default), sample.Quantile(g, 0.95, sample.Default)
			tg := w.Gain(o.proposed, o.current, 1)
			r.gainN++
			if tg >= glo && tg <= ghi {
				r.gainIn++
			}
			var loss int
			for _, v := range o.gains {
				if v < 0 {
					loss++
				}
			}
			r.reportedPL = append(r.reportedPL, float64(loss)/float64(len(o.gains)))
			realised := 0.0
			if tg < 0 {
				realised = 1
			}
			r.realised = append(r.realised, realised)
			for _, n := range o.notes {
				if strings.Contains(n.Text, "refits failed") {
					t.Logf("%s world %d: %s", k.name, i, n.Text)
				}
			}
		}
		rows = append(rows, r)
		all.roiIn += r.roiIn
		all.roiN += r.roiN
		all.widths = append(all.widths, r.widths...)
		all.gainIn += r.gainIn
		all.gainN += r.gainN
		all.reportedPL = append(all.reportedPL, r.reportedPL...)
		all.realised = append(all.realised, r.realised...)
	}
	rows = append(rows, all)
	var b strings.Builder
	fmt.Fprintf(&b, "\n| kind | worlds | ROI 90%% coverage | median ROI band width / true ROI | true gain in 90%% band | mean reported P(loss) | losing proposals |\n|---|---|---|---|---|---|---|\n")
	for _, r := range rows {
		w := slices.Clone(r.widths)
		sort.Float64s(w)
		var pl, rl float64
		for i := range r.reportedPL {
			pl += r.reportedPL[i]
			rl += r.realised[i]
		}
		fmt.Fprintf(&b, "| %s | %d | %.0f%% (%d/%d) | %.2f | %.0f%% (%d/%d) | %.0f%% | %.0f/%d |\n", r.kind, r.gainN,
			100*float64(r.roiIn)/float64(r.roiN), r.roiIn, r.roiN, sample.Quantile(w, 0.5, sample.Default),
			100*float64(r.gainIn)/float64(r.gainN), r.gainIn, r.gainN, 100*pl/float64(len(r.reportedPL)), rl, len(r.realised))
	}
	fmt.Fprintf(&b, "\nP(loss) reliability (all worlds):\n\n| reported P(loss) | worlds | realised loss frequency |\n|---|---|---|\n")
	bins := []float64{0, 0.05, 0.2, 0.5, 1.0001}
	for i := 0; i+1 < len(bins); i++ {
		var n int
		var l float64
		for j, p := range all.reportedPL {
			if p >= bins[i] && p < bins[i+1] {
				n++
				l += all.realised[j]
			}
		}
		freq := "-"
		if n > 0 {
			freq = fmt.Sprintf("%.0f%% (%.0f)", 100*l/float64(n), l)
		}
		fmt.Fprintf(&b, "| %.2f–%.2f | %d | %s |\n", bins[i], math.Min(bins[i+1], 1), n, freq)
	}
	fmt.Fprintf(&b, "\n%d worlds in %s (GOMAXPROCS 2 is what CI has)\n", all.gainN, time.Since(start).Round(time.Second))
	t.Log(b.String())
	// What is honest to assert (common practice, no source): the study ran
	// every world, and the whole-study coverage is not far below its goal
	// — a floor that catches a bootstrap that collapses (the issue's
	// starting point had the true gain outside the band on every losing
	// panel), not a claim that the goals are met; the table says that.
	if all.gainN != 48 {
		t.Fatalf("%d worlds ran, want 48", all.gainN)
	}
	if c := float64(all.roiIn) / float64(all.roiN); c < 0.6 {
		t.Errorf("ROI 90%% coverage %.0f%% over all worlds: the bands are far too narrow", 100*c)
	}
	if c := float64(all.gainIn) / float64(all.gainN); c < 0.7 {
		t.Errorf("the true gain lies in the reported 90%% band in %.0f%% of worlds: the gain bands are far too narrow", 100*c)
	}
}

// planFor is the study's plan: expected value, each channel within ±50% of
// its current spend, the same total.
func planFor(spec model.Spec) string {
	var b strings.Builder
	b.WriteString("horizon_weeks: 13\nobjective: expected\nchannels:\n")
	for _, c := range spec.Channels {
		fmt.Fprintf(&b, "  %s: {max_change: 0.5}\n", c.Name)
	}
	return b.String()
}

// makeWorld draws world seed of the kind: its panel, the spec the
// estimator uses, the lift tests given to it and the truth.
func makeWorld(t testing.TB, kind string, seed uint64) (*model.Simulated, model.Spec, []model.Lift, *groundtruth.World) {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 77))
	u := func(a, b float64) float64 { return a + (b-a)*rng.Float64() }
	tr := &model.Truth{Seed: seed, Weeks: 156, Intercept: 200000, Trend: u(-20000, 30000), Season: u(0, 0.1), NoiseSD: 0.04, NoiseAR: u(0, 0.3)}
	for c := range 4 {
		tr.Channels = append(tr.Channels, model.TrueChannel{Name: fmt.Sprintf("c%d", c), MeanSpend: u(5000, 30000),
			Variation: u(0.4, 0.8), Dark: u(0, 0.15), Decay: u(0.05, 0.6), HalfSat: math.Exp(u(math.Log(0.5), math.Log(2.5))),
			Shape: u(1.1, 2.2), Beta: u(30000, 120000)})
	}
	tr.Controls = []model.TrueControl{{Name: "promo", OnShare: 0.15, Coef: 15000}}
	estSat := map[int]string{}
	switch kind {
	case "confounded", "confounded+lift":
		tr.Channels[3].Follows = "c1"
		tr.Channels[3].Beta = tr.Channels[1].Beta * u(0.05, 0.2)
		tr.Channels[3].MeanSpend = u(5000, 10000)
	case "short-noisy":
		tr.Weeks, tr.NoiseSD = 78, 0.09
	case "saturated":
		tr.Channels[0].Dark, tr.Channels[0].Variation, tr.Channels[0].HalfSat = 0, 0.25, u(0.1, 0.2)
	case "carryover":
		tr.Channels[1].Adstock, tr.Channels[1].Peak, tr.Channels[1].MaxLag = model.AdstockDelayed, 2, 8
	case "shape":
		tr.Channels[2].Saturation = model.SaturationExponential
		tr.Channels[2].Shape = 0
		estSat[2] = model.SaturationHill
	}
	sim, err := model.Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	w := trueWorld(t, sim)
	y := sim.Panel.KPI
	n := len(y)
	switch kind {
	case "drift":
		var walk float64
		for i := range y {
			walk += 0.01 * tr.Intercept * rng.NormFloat64()
			y[i] += walk
		}
	case "season":
		for i := range y {
			y[i] += 0.04 * tr.Intercept * math.Sin(2*math.Pi*4*float64(i)/52.18+1)
		}
	case "confounder":
		x := sim.Panel.Spend[1]
		m := 0.0
		for _, v := range x {
			m += v
		}
		m /= float64(n)
		for i := range y {
			y[i] += 0.3 * tr.Channels[1].Beta / 13 * (x[i]/m - 1) // demand that moves with c1's spend
		}
	case "break":
		for i := n / 2; i < n; i++ {
			y[i] += 0.06 * tr.Intercept
		}
	}
	spec := tr.Spec()
	for k, s := range estSat {
		spec.Channels[k].Saturation = s
		spec.Channels[k].Shape = model.DefaultShape
	}
	for k := range spec.Channels {
		spec.Channels[k].Adstock = model.AdstockGeometric
		spec.Channels[k].Peak, spec.Channels[k].MaxLag = model.Range{}, 0
	}
	var lifts []model.Lift
	if kind == "confounded+lift" {
		for _, l := range []struct{ k, from, to int }{{3, 60, 67}, {1, 100, 107}} {
			m := trueLift(w, l.k, l.from, l.to)
			lifts = append(lifts, model.Lift{Channel: l.k, From: l.from, To: l.to, Incremental: m + 0.15*m*rng.NormFloat64(), StdError: 0.15 * m})
		}
	}
	return sim, spec, lifts, w
}
