package gate

import (
	"strings"
	"testing"

	"sluice/model"
	"sluice/validation"
)

// The identification evidence, end to end through the gate: a design with
// the channels of `tight`, fitted parameters set by hand so that video's
// effect is zero (β = 0, which model.Identify reports by its definition) and
// the others sit inside the default box. Every preset holds a channel that
// fails identification; under that rule video keeps its current spend while
// search and tv still move as proposed.
func TestIdentificationHoldsUnsettledChannel(t *testing.T) {
	for _, name := range []string{"standard", "cautious", "exploratory"} {
		if a := preset(t, name).Evidence.Families[validation.Identification].OnFail; a != "hold" {
			t.Errorf("preset %s: identification on_fail %q, want hold", name, a)
		}
	}
	sim, err := model.Simulate(&model.Truth{Seed: 2, Weeks: 104, Intercept: 1e5, Channels: []model.TrueChannel{
		{Name: "search", MeanSpend: 1e4, Decay: 0.3, HalfSat: 1, Shape: 2, Beta: 3e4},
		{Name: "video", MeanSpend: 5e3, Decay: 0.5, HalfSat: 1.2, Shape: 1.8, Beta: 2e4},
		{Name: "tv", MeanSpend: 8e3, Decay: 0.6, HalfSat: 1, Beta: 2e4, Saturation: model.SaturationExponential},
	}})
	if err != nil {
		t.Fatal(err)
	}
	d, err := model.NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	p := model.Params{Channels: []model.ChannelParams{
		{Decay: 0.3, HalfSat: 1, Shape: 2, Beta: 3e4},
		{Decay: 0.5, HalfSat: 1.2, Shape: 1.8, Beta: 0},
		{Decay: 0.6, HalfSat: 1, Beta: 2e4},
	}}
	checks := validation.IdentificationChecks(d, p)
	if len(checks) != 3 || checks[0].Status != validation.Pass || checks[1].Status != validation.Fail || checks[2].Status != validation.Pass {
		t.Fatalf("identification checks %+v, want pass, fail (video), pass", checks)
	}
	pol := parsePolicy(t, strings.Replace(loose, "  families:\n", "  families:\n    identification: {on_fail: hold}\n", 1))
	proposed := []float64{9000, 5400, 8600} // search −1,000; video +400; tv +600
	r := makeReview(tight, proposed, 300, 8, pol)
	r.Evidence = validation.Evidence{Checks: checks}
	dec := run(t, r)
	if dec.ApprovedPlan[1] != r.Current[1] {
		t.Fatalf("video approved %v, want it held at its current %v", dec.ApprovedPlan[1], r.Current[1])
	}
	if dec.Verdict == Refuse {
		t.Fatalf("holding one channel refused the decision: %q", dec.Reasons)
	}
	if dec.ApprovedPlan[0] == r.Current[0] && dec.ApprovedPlan[2] == r.Current[2] {
		t.Errorf("approved %v: search and tv did not move at all", dec.ApprovedPlan)
	}
	if !hasReason(dec.Moves[1], "identification/settled") {
		t.Errorf("video reasons %q, want the identification check named", dec.Moves[1].Reasons)
	}
}
