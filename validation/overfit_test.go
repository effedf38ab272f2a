package validation

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"sluice/model"
)

// withNoiseControls returns a copy of p with k controls of pure noise
// (seeded standard normal), and the spec with them.
func withNoiseControls(p *model.Panel, spec model.Spec, k int, seed uint64) (*model.Panel, model.Spec) {
	q := *p
	q.Controls = append([]string(nil), p.Controls...)
	q.Control = append([][]float64(nil), p.Control...)
	rng := rand.New(rand.NewPCG(seed, 77))
	s := spec
	s.Controls = append([]string(nil), spec.Controls...)
	for j := range k {
		name := fmt.Sprintf("noise%d", j+1)
		x := make([]float64, p.NumWeeks())
		for t := range x {
			x[t] = rng.NormFloat64()
		}
		q.Controls = append(q.Controls, name)
		q.Control = append(q.Control, x)
		s.Controls = append(s.Controls, name)
	}
	return &q, s
}

// Overfitting: controls of pure noise always raise the in-sample R² of a
// least-squares fit (adding regressors cannot increase the residual sum of
// squares; Hastie, Tibshirani & Friedman 2009, The Elements of Statistical
// Learning, ch. 7, from memory), but carry nothing about weeks the fit has
// not seen: the holdout evidence (accuracy/holdout_wmape, skill) must not
// improve. Three simulated worlds, 20 noise controls each.
func TestNoiseControlsDoNotImproveHoldout(t *testing.T) {
	if testing.Short() {
		t.Skip("six holdout fits")
	}
	set := Settings{Seed: 1, Workers: 2, Folds: 1}
	th := DefaultThresholds()
	var sumC, sumN float64
	for _, seed := range []uint64{42, 7, 99} {
		sim := simulate(t, "testdata/truth_clean.yaml", seed)
		spec := sim.Truth.Spec()
		d := design(t, sim)
		pn, sn := withNoiseControls(sim.Panel, spec, 20, seed)
		dn, err := model.NewDesign(pn, sn)
		if err != nil {
			t.Fatal(err)
		}
		y := sim.Panel.KPI
		r2 := func(d *model.Design) float64 {
			f, err := d.Fit(y, model.FitSettings{Seed: 1, Workers: 2})
			if err != nil {
				t.Fatal(err)
			}
			return model.FitStats(y, f.Residuals, d.Spec.NumParams()).R2
		}
		r2c, r2n := r2(d), r2(dn)
		bc, err := Backtest(d, y, set)
		if err != nil {
			t.Fatal(err)
		}
		bn, err := Backtest(dn, y, set)
		if err != nil {
			t.Fatal(err)
		}
		hc, hn := holdoutMetric(bc.Checks(th)), holdoutMetric(bn.Checks(th))
		t.Logf("seed %d: in-sample R² %.4f -> %.4f with noise; holdout wMAPE %.4f -> %.4f, skill %.3f -> %.3f",
			seed, r2c, r2n, hc, hn, bc.Skill, bn.Skill)
		if !(r2n > r2c) {
			t.Errorf("seed %d: in-sample R² did not rise with 20 noise controls: %.5f -> %.5f", seed, r2c, r2n)
		}
		if bn.Skill > bc.Skill {
			t.Errorf("seed %d: holdout skill improved with noise controls: %.4f -> %.4f", seed, bc.Skill, bn.Skill)
		}
		sumC, sumN = sumC+hc, sumN+hn
	}
	// One world's holdout can come out a hair better by chance; over the
	// three it must not.
	if sumN < sumC {
		t.Errorf("mean holdout wMAPE improved with noise controls: %.4f -> %.4f", sumC/3, sumN/3)
	}
}

func holdoutMetric(cs []Check) float64 {
	for _, c := range cs {
		if c.Name == "accuracy/holdout_wmape" {
			return c.Metric
		}
	}
	return -1
}
