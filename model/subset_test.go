package model

import (
	"math"
	"testing"
)

// quietTruth is the recovery world with almost no noise, so a fit must
// land on the truth.
func quietTruth(t *testing.T) *Simulated {
	t.Helper()
	tr, err := LoadTruth("testdata/truth_recovery.yaml")
	if err != nil {
		t.Fatal(err)
	}
	tr.NoiseSD = 1e-7
	sim, err := Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	return sim
}

// Fitted on a subset of the weeks of a noise-free world, the model finds
// the true parameters: the left-out weeks are left out of the objective
// only, their spend still carries over (the truth's own adstock runs over
// every week). Truth from testdata/truth_recovery.yaml.
func TestRowsRecoversTruth(t *testing.T) {
	sim := quietTruth(t)
	d, err := NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	keep := make([]bool, d.N)
	for i := range keep {
		keep[i] = i < 40 || i >= 60 // weeks 40-59 left out
	}
	s := d.Rows(keep)
	if s.NumRows() != d.N-20 {
		t.Fatalf("%d rows", s.NumRows())
	}
	warm := sim.Params.Clone()
	for k := range warm.Channels { // start away from the truth
		warm.Channels[k].Decay = 0.4
		warm.Channels[k].HalfSat *= 1.3
	}
	fr, err := s.Fit(sim.Panel.KPI, FitSettings{Seed: 1, Warm: &warm, Starts: 4, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	got, want := d.Summarize(fr.Params, 1), sim.Summary
	for k := range want {
		if rel := math.Abs(got[k].ROI-want[k].ROI) / want[k].ROI; rel > 1e-3 {
			t.Errorf("%s: ROI %.6f, true %.6f", want[k].Name, got[k].ROI, want[k].ROI)
		}
	}
	// The fitted values cover every week, the SSE only the kept ones.
	var sse float64
	for i, e := range fr.Residuals {
		if keep[i] {
			sse += e * e
		}
	}
	if len(fr.Fitted) != d.N || math.Abs(sse-fr.SSE) > 1e-6*math.Max(sse, 1) {
		t.Errorf("SSE %g, kept weeks' %g", fr.SSE, sse)
	}
}

// Keeping every week is the full fit.
func TestRowsAllIsFit(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	d, err := NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	keep := make([]bool, d.N)
	for i := range keep {
		keep[i] = true
	}
	set := FitSettings{Seed: 3, Starts: 2}
	a, err := d.Fit(sim.Panel.KPI, set)
	if err != nil {
		t.Fatal(err)
	}
	b, err := d.Rows(keep).Fit(sim.Panel.KPI, set)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(a.SSE-b.SSE) > 1e-9*a.SSE {
		t.Errorf("SSE %v vs %v", a.SSE, b.SSE)
	}
}

// A subset on which a control is constant makes the fixed columns
// dependent: an error, not a panic.
func TestRowsDependentControls(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	d, err := NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	promo := sim.Panel.Control[1]
	keep := make([]bool, d.N)
	for i, v := range promo {
		keep[i] = v == 0
	}
	if _, err := d.Rows(keep).Fit(sim.Panel.KPI, FitSettings{Seed: 1, Starts: 1}); err == nil {
		t.Error("fit on weeks without promotion accepted a constant promo column")
	}
}
