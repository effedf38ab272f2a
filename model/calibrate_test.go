package model

import (
	"math"
	"testing"
)

// The calibrated objective is least squares with one more row per test
// weighted by σ/se: a very precise test (se → 0) pins the model's estimate
// of it to the measured value; a very vague one (se → ∞) leaves the fit as
// it was.
func TestFitCalibratedLimits(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	d, err := NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	y := sim.Panel.KPI
	set := FitSettings{Seed: 1, Workers: 2}
	fit, err := d.Fit(y, set)
	if err != nil {
		t.Fatal(err)
	}
	// The priors are weighed by the fit's σ; the calibrated fits use it too,
	// so only the lift rows differ.
	sigma := fit.NoiseSD
	if !(sigma > 0) {
		t.Fatalf("fit recorded no noise SD")
	}
	k, from, to := 1, 50, 57
	before := d.LiftEffect(k, fit.Params.Channels[k], from, to)
	target := 1.5 * before
	warm := FitSettings{Seed: 1, Workers: 2, Warm: &fit.Params, Starts: 3, Priors: fit.Priors}
	tight, err := d.FitCalibrated(y, []Lift{{Channel: k, From: from, To: to, Incremental: target, StdError: 1e-4 * target}}, sigma, warm)
	if err != nil {
		t.Fatal(err)
	}
	if got := d.LiftEffect(k, tight.Params.Channels[k], from, to); math.Abs(got-target) > 1e-3*target {
		t.Errorf("precise lift test: model estimate %.6g, measured %.6g (before %.6g)", got, target, before)
	}
	loose, err := d.FitCalibrated(y, []Lift{{Channel: k, From: from, To: to, Incremental: target, StdError: 1e9 * target}}, sigma, warm)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(loose.SSE-fit.SSE) > 1e-6*fit.SSE {
		t.Errorf("vague lift test changed the fit: SSE %.10g vs %.10g", loose.SSE, fit.SSE)
	}
}
