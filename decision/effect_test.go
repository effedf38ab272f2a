package decision

import (
	"context"
	"slices"
	"testing"

	"sluice/model"
	"sluice/optimize"
)

// effectWorld simulates a 156-week panel with two channels; search's
// effectiveness rises linearly by drift over the history (the simulator's
// own definition: β(t) = β·(1 + drift·t/(n−1))), social's is constant.
func effectWorld(t testing.TB, drift float64) (*model.Panel, *model.Design, *optimize.Plan) {
	t.Helper()
	truth := &model.Truth{Seed: 4, Weeks: 156, Intercept: 100000, NoiseSD: 0.03, Channels: []model.TrueChannel{
		{Name: "search", MeanSpend: 10000, Variation: 0.6, Dark: 0.1, Decay: 0.2, HalfSat: 1.0, Shape: 1.2, Beta: 60000, Drift: drift},
		{Name: "social", MeanSpend: 8000, Variation: 0.6, Dark: 0.1, Decay: 0.3, HalfSat: 1.5, Shape: 1.4, Beta: 40000},
	}}
	sim, err := model.Simulate(truth)
	if err != nil {
		t.Fatal(err)
	}
	d, err := model.NewDesign(sim.Panel, model.NewSpec([]string{"search", "social"}, nil))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := optimize.ParsePlan([]byte("horizon_weeks: 13\nchannels:\n  search: {max_change: 0.3}\n  social: {max_change: 0.3}\n"), "plan.yaml")
	if err != nil {
		t.Fatal(err)
	}
	return sim.Panel, d, plan
}

// TestEffectChoice: with the choice on, a panel whose search effectiveness
// doubled over the history is decided with search drifting (and only
// search), the recorded change's 90% interval covers the truth's last-week
// over history-average ratio, (1+drift)/(1+drift/2) = 4/3 for drift 1
// (closed form from the simulator's definition, not from the fit), and the
// decision's draws carry a drifting coefficient; a panel without drift
// stays constant. The choice is deterministic: the same seed gives the
// same record.
func TestEffectChoice(t *testing.T) {
	for _, tc := range []struct {
		name  string
		drift float64
		model string
		chans []string
	}{
		{"drifting search", 1.0, model.EffectDrifting, []string{"search"}},
		{"no drift", 0, model.EffectConstant, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			panel, d, plan := effectWorld(t, tc.drift)
			run := func() *Prepared {
				p, err := Prepare(context.Background(), Input{Panel: panel, Design: d, Plan: plan},
					Settings{Seed: 7, Workers: 2, BootstrapDraws: 20, Replicates: 4, EffectChoice: true})
				if err != nil {
					t.Fatal(err)
				}
				return p
			}
			p := run()
			ch := p.EffectChoice
			if ch == nil || ch.Model != tc.model || !slices.Equal(ch.Channels, tc.chans) {
				t.Fatalf("choice %+v, want model %s on %v", ch, tc.model, tc.chans)
			}
			if len(ch.Changes) != 2 {
				t.Fatalf("%d channels' changes recorded, want 2", len(ch.Changes))
			}
			want := (1 + tc.drift) / (1 + tc.drift/2)
			s := ch.Changes[0]
			if !(s.Low <= want && want <= s.High) {
				t.Errorf("search change interval %.3f–%.3f misses the truth %.3f", s.Low, s.High, want)
			}
			drifting := p.Design.Spec.Channels[0].Drifting()
			if drifting != (tc.model == model.EffectDrifting) || p.Design.Spec.Channels[1].Drifting() {
				t.Errorf("design drifting: search %v, social %v", drifting, p.Design.Spec.Channels[1].Drifting())
			}
			if got := p.Point.Channels[0].Effect != nil; got != drifting {
				t.Errorf("point fit has a drifting coefficient: %v, want %v", got, drifting)
			}
			q := run()
			if q.EffectChoice.Evidence != ch.Evidence || q.Proposed[0] != p.Proposed[0] {
				t.Errorf("same seed, different outcome: %q / %q, %g / %g", ch.Evidence, q.EffectChoice.Evidence, p.Proposed[0], q.Proposed[0])
			}
		})
	}
}
