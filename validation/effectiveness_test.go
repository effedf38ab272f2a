package validation

import (
	"math"
	"strings"
	"testing"

	"sluice/model"
)

// effectWorld: the first channel's effectiveness changes by up, the
// second's by −down over three years (linear in time, the simulator's
// truth), two are constant.
func effectWorld(seed uint64, up, down, noise float64) *model.Truth {
	ch := func(name string, spend, decay, kappa, shape, beta, drift float64) model.TrueChannel {
		return model.TrueChannel{Name: name, MeanSpend: spend, Variation: 0.5, Dark: 0.15, Decay: decay, HalfSat: kappa,
			Shape: shape, Beta: beta, Drift: drift}
	}
	return &model.Truth{Seed: seed, Weeks: 156, Intercept: 100000, Trend: 5000, Season: 0.1, NoiseSD: noise,
		Channels: []model.TrueChannel{
			ch("search", 8000, 0.2, 2, 1.2, 30000, up),
			ch("social", 6000, 0.4, 2, 1, 25000, -down),
			ch("video", 10000, 0.6, 1.5, 1.3, 30000, 0),
			ch("audio", 4000, 0.3, 2, 1, 12000, 0),
		}}
}

func runEffect(t *testing.T, tr *model.Truth, reps int) (*model.Simulated, *EffectResult) {
	t.Helper()
	return runEffectKind(t, tr, reps, model.EffectDrifting)
}

// runEffectKind simulates tr and runs the effectiveness check of kind on
// it with reps refits and simulated panels.
func runEffectKind(t *testing.T, tr *model.Truth, reps int, kind string) (*model.Simulated, *EffectResult) {
	t.Helper()
	sim, err := model.Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	d, err := model.NewDesign(sim.Panel, tr.Spec())
	if err != nil {
		t.Fatal(err)
	}
	r, err := Effectiveness(d, sim.Panel.KPI, EffectSettings{Seed: 3, Workers: 2, Replicates: reps, Kind: kind})
	if err != nil {
		t.Fatal(err)
	}
	return sim, r
}

// Power and false alarms, measured. Drift worlds: search's effectiveness
// rises 80%, social's falls 40% over three years; no-drift worlds: the
// same with every channel constant. The true end-over-average change of a
// linear path is (1+δ)/(1+δ/2) (closed form of the simulator's truth).
// The test is calibrated by panels simulated from each world's own
// constant fit, so its stated false-alarm share per channel is Alpha/K =
// 2.5% (family-wise 10% over 4 channels).
//
// Measured (60 bootstrap refits, 60 simulated panels per world): rising
// named in 12 of 12 worlds, falling in 5 of 12 (z −3.1 to +0.3 against
// 2.31; before the calibration by simulated panels, when z was the change
// over its own bootstrap SD, the falling channel was named in 0 of 6: a
// fallen channel's small end value has a wide log-scale spread that the
// test no longer divides by); no-drift worlds 3 of 120 channel-worlds
// named (2.5%), drifting preferred in 1 of 30 worlds. The 90% interval
// of the change (changeInterval) covers the true change for the rising
// channel in 10 of 12 worlds, the falling one in 11 of 12, and no change
// in 113 of 120 no-drift channel-worlds (94%).
//
// Goals: the rising channel named in at least 11 of 12 drift worlds, the
// falling one in at least 4 of 12, every named channel in the right
// direction, the intervals covering the truth in at least 18 of the 24
// drifting channel-worlds (75%) and at least 85% of the unchanged ones;
// in no-drift worlds at most 5% of channel-worlds named (twice
// the stated 2.5%: 120 channel-worlds measure a 2.5% rate to about ±1.4
// points, binomial SD) and the drifting specification preferred in at
// most 10% of worlds (family-wise 10%, and the backtest must agree too).
//
// Rerun: go test ./validation -run EffectivenessPowerAndFalseAlarms -v
// (about 20 s on 2 cores).
func TestEffectivenessPowerAndFalseAlarms(t *testing.T) {
	nDrift, nFlat := 12, 30
	if testing.Short() {
		nDrift, nFlat = 2, 2
	}
	named, covered := [2]int{}, [2]int{}
	for i := range nDrift {
		seed := uint64(100 + i)
		_, r := runEffect(t, effectWorld(seed, 0.8, 0.4, 0.01), 60)
		for k, delta := range []float64{0.8, -0.4} {
			c := r.Channels[k]
			want := (1 + delta) / (1 + delta/2)
			t.Logf("drift world %d %s: change %.2f [%.2f, %.2f] z %+.1f (true %.2f); backtest ratio %.3f, prefer %s",
				seed, c.Name, c.Change, c.Low, c.High, c.Z, want, r.BacktestRatio, r.Prefer)
			if c.Low <= want && want <= c.High {
				covered[k]++
			}
			if c.Changed {
				named[k]++
				if (c.Change > 1) != (delta > 0) {
					t.Errorf("drift world %d: %s named in the wrong direction (%.2f)", seed, c.Name, c.Change)
				}
			}
		}
	}
	t.Logf("named: rising %d of %d worlds, falling %d of %d; 90%% intervals cover the true change: rising %d, falling %d",
		named[0], nDrift, named[1], nDrift, covered[0], covered[1])
	if !testing.Short() {
		if named[0] < 11 || named[1] < 4 {
			t.Errorf("power: rising named in %d of %d worlds (goal >= 11), falling in %d (goal >= 4)", named[0], nDrift, named[1])
		}
		if covered[0]+covered[1] < 18 {
			t.Errorf("intervals cover the true change in %d of %d drifting channel-worlds (goal >= 18)", covered[0]+covered[1], 2*nDrift)
		}
	} else if named[0] < 1 {
		t.Errorf("the rising channel was not named in either short world")
	}
	var alarms, prefer, cover int
	for i := range nFlat {
		seed := uint64(200 + i)
		_, r := runEffect(t, effectWorld(seed, 0, 0, 0.01), 60)
		for _, c := range r.Channels {
			if c.Low <= 1 && 1 <= c.High {
				cover++
			}
			if c.Changed {
				alarms++
				t.Logf("no-drift world %d: %s named (change %.2f, z %+.1f)", seed, c.Name, c.Change, c.Z)
			}
		}
		if r.Prefer == model.EffectDrifting {
			prefer++
		}
	}
	share := float64(alarms) / float64(4*nFlat)
	t.Logf("no-drift worlds: %d of %d channel-worlds named (%.1f%%), drifting preferred in %d of %d worlds; 90%% intervals cover no change in %d",
		alarms, 4*nFlat, 100*share, prefer, nFlat, cover)
	if !testing.Short() && float64(cover) < 0.85*float64(4*nFlat) {
		t.Errorf("intervals cover no change in %d of %d unchanged channel-worlds (goal >= 85%%)", cover, 4*nFlat)
	}
	if !testing.Short() && (share > 0.05 || float64(prefer) > 0.1*float64(nFlat)) {
		t.Errorf("false alarms: %.1f%% of channel-worlds (goal <= 5%%), drifting preferred in %d of %d worlds (goal <= 10%%)", 100*share, prefer, nFlat)
	}
}

// The seasonal kind. Season worlds: search's effectiveness is ×(1 +
// 0.5·cos 2πt/52.18), the horizon falls at its peak (true lift of the next
// 13 weeks over the year's average +36%: the mean of 1 + 0.5·cos over
// weeks 156–168, a closed form of the simulator's truth; measured fits
// say +26% to +34%, shrunk towards flat by the step prior; their 90%
// intervals cover +36% in 3 worlds of four — the plain percentile
// interval did in one, see changeInterval); no-season worlds: every
// channel constant. Goals: search named in at least 3 of 4 season worlds,
// upwards, and the seasonal specification preferred there, the interval
// covering +36% in at least 2; in no-season worlds at most 10% of
// channel-worlds named and the seasonal specification preferred in at
// most 20% of worlds (measured: 0 of 32 and 0 of 8).
func TestEffectivenessSeasonal(t *testing.T) {
	nSeason, nFlat := 4, 8
	if testing.Short() {
		nSeason, nFlat = 1, 1
	}
	var named, preferred, covered int
	var want float64 // the true lift: mean of 1 + 0.5·cos(2πt/52.18) over t = 156…168 (1.3568)
	for w := 156; w <= 168; w++ {
		want += (1 + 0.5*math.Cos(2*math.Pi*float64(w)/52.18)) / 13
	}
	for i := range nSeason {
		tr := effectWorld(uint64(400+i), 0, 0, 0.01)
		tr.Channels[0].SeasonEffect = 0.5
		_, r := runEffectKind(t, tr, 40, model.EffectSeasonal)
		c := r.Channels[0]
		t.Logf("season world %d: %s %s, z %+.1f; backtest ratio %.3f, prefer %s", 400+i, c.Name, c.Words(), c.Z, r.BacktestRatio, r.Prefer)
		if c.Changed {
			named++
			if c.Change < 1 {
				t.Errorf("season world %d: search named downwards (%.2f) at its season's peak", 400+i, c.Change)
			}
		}
		if r.Prefer == model.EffectSeasonal {
			preferred++
		}
		if c.Low <= want && want <= c.High {
			covered++
		}
	}
	var alarms, prefer int
	for i := range nFlat {
		_, r := runEffectKind(t, effectWorld(uint64(500+i), 0, 0, 0.01), 40, model.EffectSeasonal)
		for _, c := range r.Channels {
			if c.Changed {
				alarms++
				t.Logf("no-season world %d: %s named (%s, z %+.1f)", 500+i, c.Name, c.Words(), c.Z)
			}
		}
		if r.Prefer == model.EffectSeasonal {
			prefer++
		}
	}
	t.Logf("season worlds: search named in %d of %d, seasonal preferred in %d; no-season worlds: %d of %d channel-worlds named, seasonal preferred in %d of %d",
		named, nSeason, preferred, alarms, 4*nFlat, prefer, nFlat)
	if testing.Short() {
		return
	}
	if named < 3 || preferred < 3 || covered < 2 {
		t.Errorf("power: search named in %d of %d season worlds, seasonal preferred in %d (goal >= 3 each), interval covers the true lift %.3f in %d (goal >= 2)",
			named, nSeason, preferred, want, covered)
	}
	if float64(alarms) > 0.1*float64(4*nFlat) || float64(prefer) > 0.2*float64(nFlat) {
		t.Errorf("false alarms: %d of %d channel-worlds, seasonal preferred in %d of %d worlds", alarms, 4*nFlat, prefer, nFlat)
	}
}

// A history too short for the all-drifting model: the check says so and
// prefers nothing new, rather than fitting more parameters than weeks allow.
func TestEffectivenessTooShort(t *testing.T) {
	tr := effectWorld(7, 0.8, 0.4, 0.01)
	tr.Weeks = 40
	sim, err := model.Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	d, err := model.NewDesign(sim.Panel, tr.Spec())
	if err != nil {
		t.Fatal(err)
	}
	r, err := Effectiveness(d, sim.Panel.KPI, EffectSettings{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Channels) != 0 || r.Prefer != model.EffectConstant || len(r.Notes) != 1 || !strings.Contains(r.Notes[0], "needs at least") {
		t.Errorf("short history: channels %d, prefer %s, notes %q", len(r.Channels), r.Prefer, r.Notes)
	}
}

// recentChange against hand sums: a path rising linearly 1, 2, ..., 12
// has mean 6.5 and its last 3 weeks mean 11, so 11/6.5; a flat path gives
// 1; a path with a zero mean gives the neutral 1.
func TestRecentChange(t *testing.T) {
	lin := make([]float64, 12)
	for i := range lin {
		lin[i] = float64(i + 1)
	}
	for _, tc := range []struct {
		name string
		path []float64
		w    int
		want float64
	}{
		{"linear", lin, 3, 11 / 6.5},
		{"whole path", lin, 12, 1},
		{"flat", []float64{4, 4, 4, 4}, 2, 1},
		{"late step", []float64{1, 1, 1, 1, 1, 1, 2, 2}, 2, 2 / 1.25},
		{"zero", []float64{0, 0, 0}, 1, 1},
	} {
		if got := recentChange(tc.path, tc.w); math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("%s: %g, want %g", tc.name, got, tc.want)
		}
	}
}

// A change late in the history: search's effectiveness is flat for the
// first 117 weeks, then rises linearly by 60% over the last 39 (the
// simulator's drift_start_week: β(t) = β·(1 + 0.6·max(0, t−117)/38)). Its
// mean over the 156 weeks is 1 + 0.6·19.5/156 = 1.075 of β, so the true
// last week over the history average is 1.6/1.075 = 1.49 (closed form,
// recomputed below from the formula). The recent-window statistic (last
// 26 weeks over the history) sees such a change; two halves compared with
// frozen shapes see a quarter of it.
//
// Measured (8 worlds, 60 refits and 60 simulated panels each): search
// named upwards in 8 of 8 (z +2.3 to +5.5 against 2.30), the drifting
// specification preferred in 7 (in the eighth its backtest ratio was
// 1.002); the estimated change, +22% to +51% against the true +49%, is
// smoothed by the basis and the step prior — a ramp this sharp is partly
// read as an earlier, gentler one, and the 90% intervals cover the truth
// in 7 of 8 worlds (the plain percentile interval covered it in 2: see
// changeInterval). Goals: named upwards in at least 6 of 8 worlds, the
// drifting specification preferred in at least 6, the interval covering
// the truth in at least 5.
//
// Rerun: go test ./validation -run EffectivenessLateChange -v
func TestEffectivenessLateChange(t *testing.T) {
	worlds := 8
	if testing.Short() {
		worlds = 1
	}
	const start, up = 117, 0.6
	n := 156
	var mean float64
	for i := range n {
		mean += 1 + up*float64(max(0, i-start))/float64(n-1-start)
	}
	mean /= float64(n)
	want := (1 + up) / mean
	var named, preferred, covered int
	for i := range worlds {
		tr := effectWorld(uint64(600+i), 0, 0, 0.01)
		tr.Channels[0].Drift, tr.Channels[0].DriftStart = up, start
		sim, r := runEffect(t, tr, 60)
		if got := sim.EffectPath[0][n-1] / sim.EffectPath[0][0]; math.Abs(got-(1+up)) > 1e-9 {
			t.Fatalf("simulated path ends at %.4f of its start, want %.4f", got, 1+up)
		}
		c := r.Channels[0]
		if c.Low <= want && want <= c.High {
			covered++
		}
		t.Logf("late world %d: %s %s, last %d weeks %+.0f%%, z %+.1f (crit %.2f; true change %.2f); backtest ratio %.3f, prefer %s",
			600+i, c.Name, c.Words(), r.RecentWeeks, 100*(c.Recent-1), c.Z, r.ZCrit, want, r.BacktestRatio, r.Prefer)
		if c.Changed && c.Change > 1 {
			named++
		}
		if r.Prefer == model.EffectDrifting {
			preferred++
		}
	}
	t.Logf("late change: search named upwards in %d of %d worlds, drifting preferred in %d, 90%% interval covers the true change in %d", named, worlds, preferred, covered)
	if !testing.Short() && (named < 6 || preferred < 6 || covered < 5) {
		t.Errorf("late change: named in %d of %d worlds, preferred in %d (goal >= 6 each), interval covers the truth in %d (goal >= 5)", named, worlds, preferred, covered)
	}
}

// A channel with no effect at all (audio's true β is 0; noise 2% of the
// KPI): the drifting fit's interval for its change runs from about none
// to above no change, so it is not judged — never named, with a note —
// while the channels with an effect are judged. Its truth is constant, so
// naming it would be a false alarm in any case.
func TestEffectivenessNotJudged(t *testing.T) {
	tr := effectWorld(31, 0, 0, 0.02)
	tr.Channels[3].Beta = 0
	_, r := runEffect(t, tr, 40)
	for _, c := range r.Channels {
		t.Logf("%s: judged %v, change %.2f [%.2f, %.2f], z %+.1f, path mean %.3g", c.Name, c.Judged, c.Change, c.Low, c.High, c.Z, meanOf(c.Path))
		if c.Name == "audio" {
			if c.Judged || c.Changed {
				t.Errorf("audio: judged %v, named %v; want neither (its average is not settled)", c.Judged, c.Changed)
			}
			continue
		}
		if !c.Judged {
			t.Errorf("%s: not judged", c.Name)
		}
	}
	found := false
	for _, n := range r.Notes {
		found = found || strings.HasPrefix(n, "audio: not judged")
	}
	if !found {
		t.Errorf("no note says audio is not judged: %q", r.Notes)
	}
}
