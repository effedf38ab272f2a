package rehearsal

import (
	"math"
	"slices"
	"testing"
)

// TestDriftingWorldsCounted: the summary counts, per world kind, the
// decided worlds whose decision let a channel drift (the effectiveness
// choice), leaves out failed worlds and constant ones, and is empty when
// no world drifted; invented outcomes, counts by hand.
func TestDriftingWorldsCounted(t *testing.T) {
	r := &Result{Worlds: []Outcome{
		{Index: 0, Kind: Drift, Policies: []Score{{}}, Drifting: []string{"search"}},
		{Index: 1, Kind: Drift, Policies: []Score{{}}},
		{Index: 2, Kind: Drift, Policies: []Score{{}}, Drifting: []string{"tv", "audio"}},
		{Index: 3, Kind: Season, Policies: []Score{{}}, Drifting: []string{"search"}},
		{Index: 4, Kind: WellSpecified, Err: "fit: singular", Stage: "fit", Drifting: []string{"search"}},
	}}
	r.summarize([]string{"standard"})
	if len(r.Drifting) != 2 || r.Drifting[Drift] != 2 || r.Drifting[Season] != 1 {
		t.Errorf("drifting worlds %v, want drift 2, season 1", r.Drifting)
	}
	r.Worlds = r.Worlds[1:2]
	r.summarize([]string{"standard"})
	if r.Drifting != nil {
		t.Errorf("no world drifted, counted %v", r.Drifting)
	}
}

// effectWorlds are invented outcomes (not a real rehearsal) for the
// with/without summary: gains are round numbers so the shares can be
// worked by hand.
func effectWorlds() []Outcome {
	sc := func(g float64) Score { return Score{TrueGain: g, Lost: g < 0} }
	world := func(i int, k Kind, oracle, raw, std float64) Outcome {
		return Outcome{Index: i, Kind: k, Oracle: sc(oracle), Raw: sc(raw), Policies: []Score{sc(std)}}
	}
	w0 := world(0, Drift, 100, 80, 60)
	w0.Drift, w0.DriftRamp = 1.8, RampWhole
	w1 := world(1, Drift, 200, 150, 100)
	w1.Drift, w1.DriftRamp = 0.6, RampLate
	w1.Channel = "search"
	w1.Drifting, w1.EffectModel = []string{"search"}, "drifting"
	w1.Without = &Alternative{Raw: sc(-20), Policies: []Score{sc(50)}}
	w2 := Outcome{Index: 2, Kind: Drift, Drift: 1.5, DriftRamp: RampLate, Err: "fit: singular", Stage: "fit"}
	w3 := world(3, Season, 100, 90, 0)
	w3.Policies[0].Verdict = "refuse"
	w4 := world(4, Break, 100, 50, 40)
	w4.Channel = "search"
	w4.Drifting, w4.EffectModel = []string{"tv"}, "drifting"
	w4.Without = &Alternative{Raw: sc(60), Policies: []Score{sc(40)}}
	w5 := world(5, Carryover, 100, 10, 10)
	w6 := world(6, WellSpecified, 100, 70, 70)
	return []Outcome{w0, w1, w2, w3, w4, w5, w6}
}

// TestEffectComparison: the with/without summary on invented outcomes,
// every figure worked by hand. Drift: two decided worlds (oracle 100 and
// 200), one switched; raw with (80+150)/300, without (80−20)/300 and one
// loss of two; standard with (60+100)/300, without (60+50)/300. Season:
// one world, not switched, the same on both sides. Break: listed because
// the choice switched there (on tv, not the affected search: 0 on the
// affected channel, where drift's switch was on search: 1); carryover and well-specified are not (no
// switch). The failed drift world counts only among the drawn drifts.
func TestEffectComparison(t *testing.T) {
	r := &Result{Sizes: Sizes{EffectChoice: true}, Worlds: effectWorlds()}
	r.summarize([]string{"standard"})
	type row struct {
		kind                         Kind
		worlds, switched, onAffected int
		// raw with, raw without, standard with, standard without:
		// share of the oracle's gain, then P(loss)
		share, ploss [4]float64
	}
	want := []row{
		{Drift, 2, 1, 1, [4]float64{230.0 / 300, 60.0 / 300, 160.0 / 300, 110.0 / 300}, [4]float64{0, 0.5, 0, 0}},
		{Season, 1, 0, 0, [4]float64{0.9, 0.9, 0, 0}, [4]float64{0, 0, 0, 0}},
		{Break, 1, 1, 0, [4]float64{0.5, 0.6, 0.4, 0.4}, [4]float64{0, 0, 0, 0}},
	}
	if len(r.Effect) != len(want) {
		t.Fatalf("%d kinds compared, want %d: %+v", len(r.Effect), len(want), r.Effect)
	}
	for i, w := range want {
		c := r.Effect[i]
		if c.Kind != w.kind || c.Worlds != w.worlds || c.Switched != w.switched || c.OnAffected != w.onAffected || len(c.Deciders) != 2 {
			t.Fatalf("row %d: %s, %d worlds, %d switched (%d on the affected channel), %d deciders; want %s, %d, %d (%d), 2", i,
				c.Kind, c.Worlds, c.Switched, c.OnAffected, len(c.Deciders), w.kind, w.worlds, w.switched, w.onAffected)
		}
		if c.Deciders[0].Name != "raw" || c.Deciders[1].Name != "standard" {
			t.Errorf("%s: deciders %q, %q", c.Kind, c.Deciders[0].Name, c.Deciders[1].Name)
		}
		got := [4]Summary{c.Deciders[0].With, c.Deciders[0].Without, c.Deciders[1].With, c.Deciders[1].Without}
		for j := range got {
			if math.Abs(got[j].OracleShare-w.share[j]) > 1e-12 || got[j].PLoss != w.ploss[j] || got[j].Worlds != w.worlds {
				t.Errorf("%s, column %d: share %v P(loss) %v over %d worlds; want %v, %v, %d", c.Kind, j,
					got[j].OracleShare, got[j].PLoss, got[j].Worlds, w.share[j], w.ploss[j], w.worlds)
			}
		}
	}
	if s := r.Effect[1].Deciders[1].With.Refused; s != 1 {
		t.Errorf("season: standard refused %v of worlds, want 1", s)
	}
	want2 := DriftDrawn{Worlds: 3, Rising: 2, Falling: 1, LastThird: 2, Min: 0.6, Max: 1.8}
	if r.DriftDrawn == nil || *r.DriftDrawn != want2 {
		t.Errorf("drift drawn %+v, want %+v", r.DriftDrawn, want2)
	}
	// Without the choice in the rehearsal there is nothing to compare.
	r = &Result{Worlds: effectWorlds()}
	r.summarize([]string{"standard"})
	if r.Effect != nil {
		t.Errorf("a rehearsal without the choice compares %+v", r.Effect)
	}
}

// TestMergeKeepsTheComparison: shards of the invented worlds (as --shard
// 1/2 and 2/2 split them, given in reverse order) merge into exactly the
// unsharded result, byte for byte, the with/without summary included; a
// shard whose decision without the choice scores another number of
// policies is refused.
func TestMergeKeepsTheComparison(t *testing.T) {
	all := effectWorlds()
	sizes := Sizes{EffectChoice: true, Horizon: 13}
	whole := &Result{Seed: 3, Sizes: sizes, Worlds: slices.Clone(all)}
	whole.summarize([]string{"standard"})
	var even, odd []Outcome
	for _, o := range all {
		if o.Index%2 == 0 {
			even = append(even, o)
		} else {
			odd = append(odd, o)
		}
	}
	merged, err := Merge(3, sizes, []string{"standard"}, len(all), 2, [][]Outcome{odd, even})
	if err != nil {
		t.Fatal(err)
	}
	if a, b := resultJSON(t, whole), resultJSON(t, merged); !slices.Equal(a, b) {
		t.Errorf("merged differs from unsharded:\n%s\n%s", b, a)
	}
	if len(merged.Effect) != 3 {
		t.Errorf("merged comparison has %d kinds, want 3", len(merged.Effect))
	}
	bad := slices.Clone(odd)
	bad[0].Without = &Alternative{Raw: Score{}, Policies: nil}
	if _, err := Merge(3, sizes, []string{"standard"}, len(all), 2, [][]Outcome{bad, even}); err == nil {
		t.Error("a world scoring no policy without the choice was merged")
	}
}
