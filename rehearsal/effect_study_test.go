package rehearsal

import (
	"context"
	"fmt"
	"math"
	"strings"
	"testing"
	"time"

	"sluice/model"
	"sluice/validation"
)

// effectTable writes the with/without comparison as the study logs it:
// per kind and way of deciding, the share of the oracle's gain and
// P(loss), with the effectiveness choice and without it.
func effectTable(r *Result) string {
	var b strings.Builder
	for _, c := range r.Effect {
		fmt.Fprintf(&b, "%-7s %2d worlds, choice switched in %2d (%d on the affected channel):", c.Kind, c.Worlds, c.Switched, c.OnAffected)
		for _, d := range c.Deciders {
			fmt.Fprintf(&b, "  %s with %3.0f%% / %3.0f%%, without %3.0f%% / %3.0f%%;", d.Name,
				100*d.With.OracleShare, 100*d.With.PLoss, 100*d.Without.OracleShare, 100*d.Without.PLoss)
		}
		b.WriteString("\n")
	}
	return b.String()
}

// TestEffectOptionStudy is issue 16's rehearsal bullet on the example
// problem (Fernhill Tea Co., invented; 156 weeks, 6 channels): 24 drift
// worlds and 8 season worlds, each decided with the effectiveness choice
// (propose's default) and, where it switched, again without it, both
// scored under the world's own truth (truth.go, apart from the model's
// code). It logs every world (drawn drift, the choice, the standard
// policy's share of the oracle's gain with and without) and the summary.
// For the season worlds it also runs the seasonal evidence
// (validation.Effectiveness, seasonal kind) and logs its estimate of the
// affected channel's effectiveness over the horizon against the world's
// true one (the mean of its β multiplier over the horizon's weeks, the
// world's own formula), which is what seasonSize must give it to find.
//
// Measured (seed 16; 42–57 s in all on 2 cores shared with other work):
//
//	drift   24 worlds (15 rising, 9 falling; 13 over the last third only),
//	        the choice switched in 6 (in 5 of them on the affected channel,
//	        once only on an unaffected one);
//	        share of the oracle's gain / P(loss):
//	        raw      with 82% / 0%, without 83% / 0%
//	        standard with 58% / 0%, without 54% / 0%
//	season   8 worlds, the choice switched in none (on this branch it runs
//	        the drifting kind only); raw 49% / 12%, standard 26% / 0%
//	seasonal evidence: the affected channel named in 3 of the 8 season
//	        worlds, all three with a true horizon effectiveness beyond ±10%
//	        of the yearly mean (all 8 worlds are beyond it)
//
// So the option helps a little here: it switches in a quarter of the drift
// worlds and, where it does, standard keeps more of the oracle's gain than
// with the constant model in 5 of the 6 (in two, 54% and 33% against
// nothing) and a point less in 1. The assertions are what these figures
// support: the choice switches in some drift worlds (at least 2 of 24,
// measured 6); with it, the pooled share of the
// oracle's gain in drift worlds is not lower than without by more than 5
// points, about one switched world losing its whole oracle gain (each
// world's oracle is about 4% of the kind's sum; common practice, no
// source), and P(loss) is not higher by more than one world in 24; the
// seasonal evidence names the affected channel in at least 2 of the 8
// season worlds (measured 3), which is what seasonSize must give it. The
// season rows' with/without is logged, not asserted: where the choice
// switched in no world the two sides are one decision, and asserting them
// equal would pass vacuously. The first switched drift world is also
// decided on its own without the choice, which must give exactly the
// scores kept as its decision without the choice.
func TestEffectOptionStudy(t *testing.T) {
	if testing.Short() {
		t.Skip("a rehearsal of 32 worlds, each decided once or twice")
	}
	p := demoProblem(t, "standard")
	ctx := context.Background()
	settings := func(kind Kind, worlds int) Settings {
		return Settings{Seed: 16, Worlds: worlds, Misspecified: 1, Kinds: []Kind{kind}, BaseDraws: 20, WorldDraws: 30,
			Replicates: 4, Workers: 2, EffectChoice: true}
	}
	run := func(kind Kind, worlds int) *Result {
		start := time.Now()
		r, err := Run(ctx, p, settings(kind, worlds))
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("%d %s worlds in %.0f s", worlds, kind, time.Since(start).Seconds())
		for _, o := range r.Worlds {
			if o.Err != "" {
				t.Logf("world %d (%s on %s): failed at %s: %s", o.Index, o.Kind, o.Channel, o.Stage, o.Err)
				continue
			}
			wo := "the same decision"
			if o.Without != nil {
				wo = fmt.Sprintf("%.0f%%", 100*o.Without.Policies[0].OracleShare)
			}
			drift := ""
			if o.Kind == Drift {
				drift = fmt.Sprintf(" ×%.2f over the %s,", o.Drift, strings.ReplaceAll(o.DriftRamp, "_", " "))
			}
			t.Logf("world %2d %s on %s,%s chose %s %v: oracle %.0f, standard %.0f%% of it; without the choice %s",
				o.Index, o.Kind, o.Channel, drift, cmpOr(o.EffectModel, "constant"), o.Drifting, o.Oracle.TrueGain,
				100*o.Policies[0].OracleShare, wo)
		}
		if d := r.DriftDrawn; d != nil {
			t.Logf("drift drawn: %d rising, %d falling, %d over the last third; ×%.2f to ×%.2f", d.Rising, d.Falling, d.LastThird, d.Min, d.Max)
		}
		t.Logf("share of the oracle's gain / P(loss), with and without the effectiveness choice:\n%s", effectTable(r))
		return r
	}
	drift := run(Drift, 24)
	run(Season, 8)

	// The seasonal evidence on the season worlds, against their truth.
	s := settings(Season, 8).withDefaults()
	b, err := newBase(ctx, p, s)
	if err != nil {
		t.Fatal(err)
	}
	named := 0
	for i := range s.Worlds {
		w := b.world(s.Seed, i, 1, s.Kinds)
		k := w.affected
		// The world's true effectiveness over the horizon over its yearly
		// mean: the mean of 1 + seasonSize sin(2π t/P + φ) over the
		// horizon's weeks; read from the truth the world holds, checked
		// against the formula in TestSeasonIsAYearlyCycleInBeta.
		truth := w.Truth.Channels[k].Beta / b.draws[w.Draw].Channels[k].Beta
		d, err := model.NewDesign(w.Panel, p.Design.Spec)
		if err != nil {
			t.Fatal(err)
		}
		ev, err := validation.Effectiveness(d, w.Panel.KPI, validation.EffectSettings{Seed: w.Seed, Workers: 2, Kind: model.EffectSeasonal})
		if err != nil {
			t.Fatal(err)
		}
		c := ev.Channels[k]
		var others []string
		for _, o := range ev.Channels {
			if o.Changed && o.Name != w.Channel {
				others = append(others, o.Name)
			}
		}
		t.Logf("season world %d on %s: true horizon effectiveness ×%.2f of its yearly mean, seasonal evidence ×%.2f (90%% %.2f–%.2f, z %.1f, named %v); also named %v; prefers %s",
			i, w.Channel, truth, c.Change, c.Low, c.High, c.Z, c.Changed, others, ev.Prefer)
		if c.Changed && math.Abs(truth-1) > 0.1 {
			named++
		}
	}
	t.Logf("seasonal evidence named the affected channel in %d of %d season worlds with a true horizon effectiveness beyond ±10%%", named, s.Worlds)
	if named < 2 {
		t.Errorf("the seasonal evidence named the affected channel in %d of %d season worlds, want at least 2 (measured 3)", named, s.Worlds)
	}

	// A switched world's decision without the choice is exactly the world
	// decided by a rehearsal run without the choice: same seed, sizes and
	// policies, nothing else differs (first switched drift world).
	for _, o := range drift.Worlds {
		if o.Without == nil {
			continue
		}
		s0 := settings(Drift, 24).withDefaults()
		b0, err := newBase(ctx, p, s0)
		if err != nil {
			t.Fatal(err)
		}
		s0.EffectChoice = false
		alone, err := decideWorld(ctx, p, s0, b0.world(s0.Seed, o.Index, s0.Misspecified, s0.Kinds))
		if err != nil {
			t.Fatal(err)
		}
		if alone.Without != nil || alone.Drifting != nil {
			t.Errorf("world %d decided without the choice still varies %v", o.Index, alone.Drifting)
		}
		if fmt.Sprint(alone.Raw, alone.Policies) != fmt.Sprint(o.Without.Raw, o.Without.Policies) {
			t.Errorf("world %d without the choice: %+v %+v, decided alone %+v %+v", o.Index, o.Without.Raw, o.Without.Policies, alone.Raw, alone.Policies)
		}
		break
	}

	var dc *EffectComparison
	for i := range drift.Effect {
		if drift.Effect[i].Kind == Drift {
			dc = &drift.Effect[i]
		}
	}
	if dc == nil {
		t.Fatal("no drift row in the with/without summary")
	}
	if dc.Switched < 2 {
		t.Errorf("the effectiveness choice switched in %d of %d drift worlds, want at least 2 (measured 6)", dc.Switched, dc.Worlds)
	}
	for _, d := range dc.Deciders {
		if d.With.OracleShare < d.Without.OracleShare-0.05 {
			t.Errorf("%s: with the choice %.0f%% of the oracle's gain, without %.0f%%: lower by more than 5 points",
				d.Name, 100*d.With.OracleShare, 100*d.Without.OracleShare)
		}
		if d.With.PLoss > d.Without.PLoss+1/float64(dc.Worlds)+1e-12 {
			t.Errorf("%s: P(loss) with the choice %.0f%%, without %.0f%%: higher by more than one world",
				d.Name, 100*d.With.PLoss, 100*d.Without.PLoss)
		}
	}
}

func cmpOr(a, b string) string {
	if a != "" {
		return a
	}
	return b
}
