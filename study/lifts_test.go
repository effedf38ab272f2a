package study

import (
	"math"
	"strings"
	"testing"

	"sluice/model"
	"sluice/validation"
)

// A confounded pair: display is always bought with video, so the weekly
// data cannot tell their responses apart, and the fit hands display much of
// video's effect: without lift tests the raw proposal raises display and
// loses money in truth. Two lift tests (8 weeks each, standard error 15% of the
// true lift, computed by groundtruth) expose it. With the lifts in the
// likelihood, the raw proposal must not raise display when the truth's
// best plan cuts it, and its true gain (groundtruth) must be positive.
func TestConfoundedPairWithLifts(t *testing.T) {
	if testing.Short() {
		t.Skip("simulation study")
	}
	tr, err := model.LoadTruth("testdata/world_overstated.yaml")
	if err != nil {
		t.Fatal(err)
	}
	sim, err := model.Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	w := trueWorld(t, sim)
	spec := tr.Spec()
	names := spec.ChannelNames()
	video, display := 1, 2
	var lifts []model.Lift
	for _, l := range []struct{ k, from, to int }{{display, 60, 67}, {video, 100, 107}} {
		m := trueLift(w, l.k, l.from, l.to)
		lifts = append(lifts, model.Lift{Channel: l.k, From: l.from, To: l.to, Incremental: m, StdError: 0.15 * m})
	}
	cur := make([]float64, len(names))
	for k := range cur {
		cur[k] = w.CurrentSpend(k)
	}
	for _, c := range []struct {
		name  string
		lifts []model.Lift
	}{{"without lifts", nil}, {"with lifts", lifts}} {
		o := estimate(t, sim, spec, c.lifts, 60, 3, "")
		gain := w.Gain(o.proposed, cur, 1)
		t.Logf("%s: current %.0f, proposed %.0f, true gain %.0f; true marginal ROI at current %.3f %.3f %.3f",
			c.name, cur, o.proposed, gain, w.MarginalROI(0, cur[0]), w.MarginalROI(1, cur[1]), w.MarginalROI(2, cur[2]))
		if c.lifts == nil {
			// The failure the lifts must cure; without it the check below
			// would prove nothing.
			if o.proposed[display] <= cur[display] {
				t.Fatalf("without lifts the proposal does not raise display (%.0f to %.0f): the world no longer shows the failure", cur[display], o.proposed[display])
			}
			continue
		}
		if o.proposed[display] > cur[display]*1.001 {
			t.Errorf("with lifts the proposal still raises display from %.0f to %.0f", cur[display], o.proposed[display])
		}
		if !(gain > 0) {
			t.Errorf("with lifts the proposal's true gain is %.0f", gain)
		}
	}
}

// The lift check on a calibrated fit reports both fits: the weekly data
// alone (a refit without the lifts) credit display with far more than its
// true lift, the calibrated fit agrees with the experiment, and the check
// is graded on the refit without the lifts, so it still flags the
// disagreement. Display's ROI moves down towards its truth (groundtruth).
func TestLiftCheckReportsBothFits(t *testing.T) {
	tr, err := model.LoadTruth("testdata/world_overstated.yaml")
	if err != nil {
		t.Fatal(err)
	}
	sim, err := model.Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	w := trueWorld(t, sim)
	display := 2
	m := trueLift(w, display, 60, 67)
	d, err := model.NewDesign(sim.Panel, tr.Spec())
	if err != nil {
		t.Fatal(err)
	}
	cal, err := d.WithLifts([]model.Lift{{Channel: display, From: 60, To: 67, Incremental: m, StdError: 0.15 * m}})
	if err != nil {
		t.Fatal(err)
	}
	fit, err := cal.Fit(sim.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	tests := []validation.LiftTest{{Channel: "display", ChannelIndex: display, From: 60, To: 67, Incremental: m, StdError: 0.15 * m,
		Source: "lifts.csv", Line: 2}}
	r := validation.CompareLifts(cal, fit, tests, nil)
	if !r.Calibrated || len(r.ROIMoves) != 3 {
		t.Fatalf("calibrated %v, %d ROI moves", r.Calibrated, len(r.ROIMoves))
	}
	t.Logf("display lift: true %.0f; without the lift in the fit %.0f (z %.2f); with it %.0f (z %.2f); ROI %.3f -> %.3f (truth %.3f)",
		m, r.Uncalibrated[0], r.UncalibratedZ[0], r.Model[0], r.Z[0], r.ROIMoves[display].Uncalibrated, r.ROIMoves[display].Calibrated, w.ROI(display))
	if math.Abs(r.Z[0]) > 2 {
		t.Errorf("the calibrated fit disagrees with its own lift test: z %.2f", r.Z[0])
	}
	if math.Abs(r.UncalibratedZ[0]) < 2 {
		t.Errorf("without the lift the data agree with it (z %.2f): the world does not show the overstatement", r.UncalibratedZ[0])
	}
	mv := r.ROIMoves[display]
	if !(mv.Calibrated < mv.Uncalibrated) || math.Abs(mv.Calibrated-w.ROI(display)) >= math.Abs(mv.Uncalibrated-w.ROI(display)) {
		t.Errorf("display ROI %.3f -> %.3f did not move towards the truth %.3f", mv.Uncalibrated, mv.Calibrated, w.ROI(display))
	}
	// validate --calibrate on a design that already has the lifts compares
	// with a refit without them: the same ROIs as the check's.
	cr, err := validation.Calibrate(cal, sim.Panel.KPI, fit, tests, validation.Settings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(cr.After[display]-mv.Calibrated) > 1e-12*mv.Calibrated || math.Abs(cr.Before[display]-mv.Uncalibrated) > 1e-3*mv.Uncalibrated {
		t.Errorf("--calibrate: ROI %.4f -> %.4f, the check's %.4f -> %.4f", cr.Before[display], cr.After[display], mv.Uncalibrated, mv.Calibrated)
	}
	th := validation.DefaultThresholds()
	cs := r.Checks(th)
	if len(cs) != 1 || !strings.Contains(cs[0].Detail, "graded on the fit without them") || cs[0].Status == validation.Pass {
		t.Errorf("check %+v: want a non-passing check graded on the fit without the lifts", cs)
	}
}
