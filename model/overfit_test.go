package model

import (
	"math/rand/v2"
	"testing"
)

// The classic overfitting symptom (common practice, no source): adding
// regressors that are pure noise can only lower the least-squares residual,
// so in-sample R² rises although the model has learnt nothing. In-sample fit
// is therefore never used as evidence of a good model.
func TestNoiseControlsRaiseInSampleR2(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	spec := sim.Truth.Spec()
	fit := func(p *Panel, s Spec) float64 {
		d, err := NewDesign(p, s)
		if err != nil {
			t.Fatal(err)
		}
		fr, err := d.Fit(p.KPI, FitSettings{Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		return FitStats(p.KPI, fr.Residuals, s.NumParams()).R2
	}
	base := fit(sim.Panel, spec)

	noisy := *sim.Panel
	rng := rand.New(rand.NewPCG(9, 9))
	noisySpec := spec
	noisySpec.Controls = append([]string(nil), spec.Controls...)
	noisy.Controls = append([]string(nil), sim.Panel.Controls...)
	noisy.Control = append([][]float64(nil), sim.Panel.Control...)
	for j := range 8 {
		z := make([]float64, noisy.NumWeeks())
		for i := range z {
			z[i] = rng.NormFloat64()
		}
		name := "noise" + string(rune('a'+j))
		noisy.Controls = append(noisy.Controls, name)
		noisy.Control = append(noisy.Control, z)
		noisySpec.Controls = append(noisySpec.Controls, name)
	}
	more := fit(&noisy, noisySpec)
	t.Logf("in-sample R² %.4f with the true controls, %.4f with 8 pure-noise controls added", base, more)
	if !(more > base) {
		t.Errorf("R² did not rise with noise controls: %.5f -> %.5f", base, more)
	}
}
