package study

import (
	"testing"

	"sluice/model"
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
