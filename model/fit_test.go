package model

import (
	"math"
	"sort"
	"strings"
	"testing"
)

func simulateFile(t testing.TB, path string) *Simulated {
	t.Helper()
	tr, err := LoadTruth(path)
	if err != nil {
		t.Fatal(err)
	}
	sim, err := Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	return sim
}

// Parameter recovery on simulated data with a known truth (156 weeks,
// 4 channels, 5% noise): ROI within 20% of the truth for every channel
// carrying at least 8% of the KPI, and the marginal-ROI ranking of those
// channels preserved. The 20%/8% rule is the project's acceptance criterion
// (common practice, no source). One noisy world can defeat any estimator,
// so the same truth is drawn with five seeds: the ROI rule must hold in at
// least four, the ranking in at least three (true marginal ROIs at the
// last quarter's spend can lie within a few percent of each other, where no
// estimator ranks them reliably); each world's figures are logged.
func TestRecoversSimulatedTruth(t *testing.T) {
	if testing.Short() {
		t.Skip("five fits")
	}
	base, err := LoadTruth("testdata/truth_recovery.yaml")
	if err != nil {
		t.Fatal(err)
	}
	roiOK, rankOK := 0, 0
	for _, seed := range []uint64{42, 7, 99, 5, 11} {
		tr := *base
		tr.Seed = seed
		sim, err := Simulate(&tr)
		if err != nil {
			t.Fatal(err)
		}
		d, err := NewDesign(sim.Panel, tr.Spec())
		if err != nil {
			t.Fatal(err)
		}
		fr, err := d.Fit(sim.Panel.KPI, FitSettings{Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		got := d.Summarize(fr.Params, 1)
		var kpi float64
		for _, v := range sim.Panel.KPI {
			kpi += v
		}
		ok := true
		var big []int
		for k, s := range sim.Summary {
			share := s.Contribution / kpi
			rel := math.Abs(got[k].ROI-s.ROI) / s.ROI
			t.Logf("seed %d %-7s share %.3f  ROI true %.3f fit %.3f (%.1f%%)  mROI true %.3f fit %.3f",
				seed, s.Name, share, s.ROI, got[k].ROI, 100*rel, s.MROI, got[k].MROI)
			if share >= 0.08 {
				big = append(big, k)
				if rel > 0.20 {
					ok = false
				}
			}
		}
		if sameRanking(sim.Summary, got, big) {
			rankOK++
		} else {
			t.Logf("seed %d: marginal ROI ranking not preserved", seed)
		}
		if fr.Converged == 0 {
			t.Logf("seed %d: no start converged (%v)", seed, fr.Status)
		}
		if ok {
			roiOK++
		}
	}
	if roiOK < 4 || rankOK < 3 {
		t.Errorf("ROI within 20%% in %d of 5 worlds (want >= 4), ranking kept in %d (want >= 3)", roiOK, rankOK)
	}
	t.Logf("ROI within 20%% in %d of 5 worlds, ranking kept in %d", roiOK, rankOK)
}

func sameRanking(a, b []ChannelSummary, which []int) bool {
	order := func(s []ChannelSummary) []int {
		idx := append([]int(nil), which...)
		sort.Slice(idx, func(i, j int) bool { return s[idx[i]].MROI > s[idx[j]].MROI })
		return idx
	}
	oa, ob := order(a), order(b)
	for i := range oa {
		if oa[i] != ob[i] {
			return false
		}
	}
	return true
}

// A head design keeps the full design's scaling, so the prediction of its
// weeks equals the first weeks of the full design's prediction.
func TestHeadPredictsLikeFull(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	d, err := NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	full := d.Predict(sim.Params)
	head := d.Head(100).Predict(sim.Params)
	for i := range head {
		if math.Abs(head[i]-full[i]) > 1e-9*math.Abs(full[i]) {
			t.Fatalf("week %d: head %v, full %v", i, head[i], full[i])
		}
	}
}

// A forecast continues the design: forecasting the last 20 weeks of a
// panel from its first part, with the spend and controls those weeks
// actually had held constant, equals predicting them when spend and
// controls are constant there (the base columns and adstock carry on).
func TestForecastContinuesDesign(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	p := sim.Panel
	n, h := p.NumWeeks(), 20
	// Make the last h weeks constant so the forecast's inputs are exact.
	for k := range p.Spend {
		for i := n - h; i < n; i++ {
			p.Spend[k][i] = p.Spend[k][n-h]
		}
	}
	for j := range p.Control {
		for i := n - h; i < n; i++ {
			p.Control[j][i] = p.Control[j][n-h]
		}
	}
	d, err := NewDesign(p, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	full := d.Predict(sim.Params)
	head := d.Head(n - h)
	plan := make([]float64, len(p.Spend))
	for k := range plan {
		plan[k] = p.Spend[k][n-h]
	}
	ctl := make([]float64, len(p.Control))
	for j := range ctl {
		ctl[j] = p.Control[j][n-h]
	}
	fc := head.Forecast(sim.Params, plan, ctl, h)
	for i, v := range fc {
		if want := full[n-h+i]; math.Abs(v-want) > 1e-9*math.Abs(want) {
			t.Fatalf("week %d: forecast %v, prediction %v", i, v, want)
		}
	}
}

// A control that never changes cannot be told apart from the intercept;
// the design refuses it by name instead of failing inside the fit.
func TestConstantControlRefused(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	p := sim.Panel
	for i := range p.Control[0] {
		p.Control[0][i] = 1
	}
	_, err := NewDesign(p, sim.Truth.Spec())
	if err == nil || !strings.Contains(err.Error(), `"price_index" is constant`) {
		t.Fatalf("err = %v", err)
	}
}
