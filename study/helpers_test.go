package study

import (
	"context"
	"testing"

	"sluice/internal/groundtruth"
	"sluice/model"
	"sluice/optimize"
	"sluice/uncertainty"
)

// outcome is one run of the decision's estimation half on a world: the
// draws, the raw proposal and its gain distribution over the draws.
type outcome struct {
	design   *model.Design
	draws    []model.Params
	failed   int
	current  []float64
	proposed []float64
	gains    []float64 // per draw, proposal vs status quo
	notes    []uncertainty.Note
}

const studyPlan = "horizon_weeks: 13\nobjective: expected\n"

// estimate fits, bootstraps (n replicates) and allocates on the panel,
// with the lift tests in the likelihood when given.
func estimate(t testing.TB, sim *model.Simulated, spec model.Spec, lifts []model.Lift, n int, seed uint64, plan string) *outcome {
	t.Helper()
	d, err := model.NewDesign(sim.Panel, spec)
	if err != nil {
		t.Fatal(err)
	}
	if len(lifts) > 0 {
		if d, err = d.WithLifts(lifts); err != nil {
			t.Fatal(err)
		}
	}
	b := &uncertainty.Bootstrap{Design: d, Y: sim.Panel.KPI, Draws: n, Seed: seed, Workers: 2}
	dr, err := b.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	o := &outcome{design: d, draws: dr.Params(), failed: dr.Failed(), notes: dr.Notes()}
	if plan == "" {
		plan = studyPlan
	}
	pl, err := optimize.ParsePlan([]byte(plan), "plan.yaml")
	if err != nil {
		t.Fatal(err)
	}
	o.current = d.CurrentSpend()
	prob, err := pl.Resolve(d.Spec.ChannelNames(), o.current)
	if err != nil {
		t.Fatal(err)
	}
	prob.Response = d.NewCurves(o.draws, pl.HorizonWeeks)
	prob.Point = d.NewCurves([]model.Params{dr.Header.FullFit.Params}, pl.HorizonWeeks)
	res, err := optimize.Solve(*prob, &optimize.Settings{Seed: seed})
	if err != nil {
		t.Fatal(err)
	}
	o.proposed = res.Proposed
	o.gains = prob.Economics.Gains(nil, prob.Response, o.proposed, o.current)
	return o
}

// trueWorld is the simulated world's truth for package groundtruth.
func trueWorld(t testing.TB, sim *model.Simulated) *groundtruth.World {
	t.Helper()
	d, err := model.NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	return model.TrueWorld(d, sim.Params)
}

// trueLift is what a perfect lift test measures in the world (groundtruth).
func trueLift(w *groundtruth.World, k, from, to int) float64 { return w.Lift(k, from, to) }
