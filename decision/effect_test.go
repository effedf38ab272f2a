package decision

import (
	"context"
	"maps"
	"slices"
	"testing"

	"sluice/model"
	"sluice/optimize"
	"sluice/policies"
	"sluice/uncertainty"
	"sluice/validation"
)

// effectWorld simulates a 156-week panel with two channels; search's
// effectiveness rises linearly by drift over the history (the simulator's
// own definition: β(t) = β·(1 + drift·t/(n−1))), social's is constant.
func effectWorld(t testing.TB, drift float64) (*model.Panel, *model.Design, *optimize.Plan) {
	return effectSeasonWorld(t, drift, 0)
}

// effectSeasonWorld is effectWorld with search's effectiveness also
// following the season: ×(1 + season·cos 2πt/P) (the simulator's own
// definition).
func effectSeasonWorld(t testing.TB, drift, season float64) (*model.Panel, *model.Design, *optimize.Plan) {
	t.Helper()
	truth := &model.Truth{Seed: 4, Weeks: 156, Intercept: 100000, NoiseSD: 0.03, Channels: []model.TrueChannel{
		{Name: "search", MeanSpend: 10000, Variation: 0.6, Dark: 0.1, Decay: 0.2, HalfSat: 1.0, Shape: 1.2, Beta: 60000, Drift: drift, SeasonEffect: season},
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
// decision's draws carry a drifting coefficient; a panel whose search
// effectiveness swings ±50% with the season is decided with search
// seasonal; a panel without either stays constant. Both kinds' changes are
// recorded, each with its kind. The choice is deterministic: the same seed
// gives the same record.
func TestEffectChoice(t *testing.T) {
	for _, tc := range []struct {
		name          string
		drift, season float64
		model         string
		chans         []string
	}{
		{"drifting search", 1.0, 0, model.EffectDrifting, []string{"search"}},
		{"seasonal search", 0, 0.5, model.EffectSeasonal, []string{"search"}},
		{"no drift", 0, 0, model.EffectConstant, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			panel, d, plan := effectSeasonWorld(t, tc.drift, tc.season)
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
			if len(ch.Changes) != 4 || ch.Changes[0].Kind != model.EffectDrifting || ch.Changes[2].Kind != model.EffectSeasonal {
				t.Fatalf("changes recorded %+v, want search and social drifting, then seasonal", ch.Changes)
			}
			if tc.season == 0 {
				want := (1 + tc.drift) / (1 + tc.drift/2)
				s := ch.Changes[0]
				if !(s.Low <= want && want <= s.High) {
					t.Errorf("search change interval %.3f–%.3f misses the truth %.3f", s.Low, s.High, want)
				}
			}
			varying := p.Design.Spec.Channels[0].Varying()
			if varying != (tc.model != model.EffectConstant) || p.Design.Spec.Channels[1].Varying() ||
				p.Design.Spec.Channels[0].Seasonal() != (tc.model == model.EffectSeasonal) {
				t.Errorf("design varying: search %v (seasonal %v), social %v", varying, p.Design.Spec.Channels[0].Seasonal(), p.Design.Spec.Channels[1].Varying())
			}
			if got := p.Point.Channels[0].Effect != nil; got != varying {
				t.Errorf("point fit has a varying coefficient: %v, want %v", got, varying)
			}
			q := run()
			if q.EffectChoice.Evidence != ch.Evidence || q.Proposed[0] != p.Proposed[0] {
				t.Errorf("same seed, different outcome: %q / %q, %g / %g", ch.Evidence, q.EffectChoice.Evidence, p.Proposed[0], q.Proposed[0])
			}
		})
	}
}

// TestEffectModelledCheck: when the evidence names search's change but the
// decision keeps the constant model (a draws file of the constant model
// fixes it), the effect/modelled check fails on search; a policy whose
// effectiveness family holds (cautious's rule, here on the standard
// preset so nothing else changes) keeps search at its current spend,
// while standard itself only warns and moves it. social, not named,
// passes. With the choice free, search drifts and the check passes.
// Truth: search's effectiveness doubles over the history (effectWorld,
// the simulator's drift).
func TestEffectModelledCheck(t *testing.T) {
	panel, d, plan := effectWorld(t, 1.0)
	b := &uncertainty.Bootstrap{Design: d, Y: panel.KPI, Method: uncertainty.MovingBlock, Draws: 20, Seed: 7, Workers: 2}
	dr, err := b.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	std, err := policies.Preset("standard")
	if err != nil {
		t.Fatal(err)
	}
	holding, err := policies.Preset("standard")
	if err != nil {
		t.Fatal(err)
	}
	holding.Evidence.Families = maps.Clone(holding.Evidence.Families)
	holding.Evidence.Families[validation.EffectFamily] = policies.ActionRule{OnFail: policies.Hold}
	if std.Evidence.Families[validation.EffectFamily].OnFail != policies.Warn {
		t.Fatalf("standard's effectiveness rule is %q, want warn", std.Evidence.Families[validation.EffectFamily].OnFail)
	}
	for _, tc := range []struct {
		name   string
		draws  *uncertainty.Draws
		search validation.Status
	}{
		{"draws fix the constant model", dr, validation.Fail},
		{"choice free", nil, validation.Pass},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p, err := Prepare(context.Background(), Input{Panel: panel, Design: d, Plan: plan, Draws: tc.draws},
				Settings{Seed: 7, Workers: 2, BootstrapDraws: 20, Replicates: 4, EffectChoice: true})
			if err != nil {
				t.Fatal(err)
			}
			got := map[string]validation.Status{}
			for _, c := range p.Validation.Evidence.Checks {
				if c.Name == "effect/modelled" {
					got[c.Scope] = c.Status
				}
			}
			if got["search"] != tc.search || got["social"] != validation.Pass {
				t.Fatalf("effect/modelled: %v, want search %s and social pass", got, tc.search)
			}
			for _, pc := range []struct {
				pol      *policies.Policy
				wantHold bool
			}{{holding, tc.search == validation.Fail}, {std, false}} {
				out, err := p.Judge(pc.pol, nil)
				if err != nil {
					t.Fatal(err)
				}
				held := out.Gate.ApprovedPlan[0] == p.Current[0]
				if held != pc.wantHold {
					t.Errorf("effectiveness rule %q: search approved %.0f against current %.0f: held %v, want %v",
						pc.pol.Evidence.Families[validation.EffectFamily].OnFail, out.Gate.ApprovedPlan[0], p.Current[0], held, pc.wantHold)
				}
			}
		})
	}
}
