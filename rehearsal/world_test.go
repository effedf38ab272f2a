package rehearsal

import (
	"math"
	"slices"
	"testing"

	"sluice/model"
)

// noiselessBase is the demo's point fit with zero residuals, so a world's
// KPI is the model formula of README.md (y = base + Σ β·sat(adstock(x)))
// plus the world's departure and nothing else.
func noiselessBase(t *testing.T) *base {
	t.Helper()
	p := demoProblem(t)
	fit, err := p.Design.Fit(p.Panel.KPI, fitSettingsForTest())
	if err != nil {
		t.Fatal(err)
	}
	return &base{panel: p.Panel, design: p.Design, draws: []model.Params{fit.Params}, resid: make([]float64, p.Design.N), block: 4, horiz: 13}
}

// twin finds a world of the given kind and returns it with its
// well-specified twin (same seed and index, no departure).
func twin(t *testing.T, b *base, kind Kind) (bad, well *World) {
	t.Helper()
	for i := range 200 {
		w := b.world(11, i, 1, []Kind{kind})
		if w.Kind == kind {
			return w, b.world(11, i, 0, nil)
		}
	}
	t.Fatalf("no %s world in 200", kind)
	return nil, nil
}

// TestWellSpecifiedWorldIsTheModel: a well-specified world's KPI, made by
// the world's own transforms (truth.go), equals the model's prediction
// (model.Design.Predict, code written separately) of the drawn parameters:
// two implementations of README's formula agree. The kernel is cut at
// relative weight 1e-9, so the tolerance is 1e-7 of the KPI.
func TestWellSpecifiedWorldIsTheModel(t *testing.T) {
	b := noiselessBase(t)
	w := b.world(11, 0, 0, nil)
	want := b.design.Predict(b.draws[0])
	for i := range want {
		if math.Abs(w.Panel.KPI[i]-math.Max(0, want[i])) > 1e-7*math.Abs(want[i]) {
			t.Fatalf("week %d: KPI %v, model %v", i, w.Panel.KPI[i], want[i])
		}
	}
	if !slices.Equal(w.Truth.Channels, b.draws[0].Channels) {
		t.Errorf("truth %+v differs from the draw %+v", w.Truth.Channels, b.draws[0].Channels)
	}
}

// TestDriftWorldsDrawTheirSize: over the first 40 drift worlds of a seed,
// each world's drawn end-over-start multiplier lies in the stated ranges
// (issue 16: a rise of 50–100% or a fall of 30–50% over the history), both
// directions and both ramps occur, and the β multiplier the KPI carries,
// read off the KPI against the well-specified twin, is the stated path
// computed here from its formula: 1 up to week from, then the straight
// line to the drawn end in the last week, with from = 0 (whole history) or
// n − ⌈n/3⌉ − 1 (last third). The world's horizon β is the drawn end
// times the drawn β. Not from the code under test: the path is written
// out below and the media term is the model's (model.Design.Media, a
// separate implementation of README's transforms).
func TestDriftWorldsDrawTheirSize(t *testing.T) {
	b := noiselessBase(t)
	n := b.design.N
	lateFrom := n - int(math.Ceil(float64(n)/3)) - 1
	var rising, falling, late, found int
	for i := 0; i < 200 && found < 40; i++ {
		bad := b.world(11, i, 1, []Kind{Drift})
		if bad.Kind != Drift {
			continue
		}
		found++
		well := b.world(11, i, 0, nil)
		e := bad.DriftEnd
		switch {
		case e >= 1.5 && e <= 2.0:
			rising++
		case e >= 0.5 && e <= 0.7:
			falling++
		default:
			t.Fatalf("world %d: drift ×%v is outside ×1.5–2 and ×0.5–0.7", i, e)
		}
		from := 0
		switch bad.DriftRamp {
		case "whole_history":
		case "last_third":
			from = lateFrom
			late++
		default:
			t.Fatalf("world %d: ramp %q", i, bad.DriftRamp)
		}
		if bad.DriftFrom != from {
			t.Fatalf("world %d: ramp from week %d, want %d", i, bad.DriftFrom, from)
		}
		k := slices.Index(b.design.Spec.ChannelNames(), bad.Channel)
		cp := b.draws[0].Channels[k]
		m := b.design.Media(make([]float64, n), k, cp)
		for wk := range n {
			if m[wk] <= 1e-9 {
				continue
			}
			want := 1.0
			if wk > from {
				want = 1 + (e-1)*float64(wk-from)/float64(n-1-from)
			}
			// KPI difference = β (mult − 1) media; the kernel is cut at 1e-9
			// in the world, so allow 1e-6 relative.
			got := 1 + (bad.Panel.KPI[wk]-well.Panel.KPI[wk])/(cp.Beta*m[wk])
			if math.Abs(got-want) > 1e-6*want {
				t.Fatalf("world %d (%s, ×%.3f), week %d: β multiplier %v, want %v", i, bad.DriftRamp, e, wk, got, want)
			}
		}
		if got, want := bad.Truth.Channels[k].Beta, cp.Beta*e; math.Abs(got-want) > 1e-9*want {
			t.Errorf("world %d: horizon β %v, want %v", i, got, want)
		}
	}
	t.Logf("%d drift worlds: %d rising, %d falling, %d over the last third", found, rising, falling, late)
	if found < 40 || rising == 0 || falling == 0 || late == 0 || late == found {
		t.Errorf("%d drift worlds: %d rising, %d falling, %d over the last third; want both directions and both ramps", found, rising, falling, late)
	}
}

// TestConfounderIsCorrelatedWithSpend: the added driver has correlation
// about confounderCorr with the channel's spend (sampling error of a
// correlation over n weeks is about (1−ρ²)/√n ≈ 0.04, Fisher 1915, from
// memory; allow 0.2 for the AR(1) part) and leaves the truth unchanged.
func TestConfounderIsCorrelatedWithSpend(t *testing.T) {
	b := noiselessBase(t)
	bad, well := twin(t, b, Confounder)
	k := slices.Index(b.design.Spec.ChannelNames(), bad.Channel)
	diff := make([]float64, b.design.N)
	for i := range diff {
		diff[i] = bad.Panel.KPI[i] - well.Panel.KPI[i]
	}
	r := corr(diff, b.design.Spend[k])
	t.Logf("confounder on %s: correlation with spend %.3f", bad.Channel, r)
	if math.Abs(r-confounderCorr) > 0.2 {
		t.Errorf("correlation %v, want about %v", r, confounderCorr)
	}
	if !slices.Equal(bad.Truth.Channels, well.Truth.Channels) {
		t.Errorf("a confounder changed the truth")
	}
}

func corr(x, y []float64) float64 {
	mx, sx := meanSD(x)
	my, sy := meanSD(y)
	var c float64
	for i := range x {
		c += (x[i] - mx) * (y[i] - my)
	}
	return c / float64(len(x)-1) / (sx * sy)
}

// TestBreakChangesTheEndOfHistoryTruth: after the break β is ×(1±breakSize)
// and stays so for the horizon.
func TestBreakChangesTheEndOfHistoryTruth(t *testing.T) {
	b := noiselessBase(t)
	bad, _ := twin(t, b, Break)
	k := slices.Index(b.design.Spec.ChannelNames(), bad.Channel)
	f := bad.Truth.Channels[k].Beta / b.draws[0].Channels[k].Beta
	if math.Abs(math.Abs(f-1)-breakSize) > 1e-9 {
		t.Errorf("β after the break is ×%v, want ×(1±%v)", f, breakSize)
	}
}

// TestDepartureSizes: each kind that changes the truth changes it by the
// documented amount, on the affected channel only.
func TestDepartureSizes(t *testing.T) {
	b := noiselessBase(t)
	tests := []struct {
		kind Kind
		diff func(truth, drawn model.ChannelParams) float64 // the documented size
		want float64
	}{
		{Break, func(a, d model.ChannelParams) float64 { return math.Abs(a.Beta/d.Beta - 1) }, breakSize},
	}
	for _, tc := range tests {
		bad, _ := twin(t, b, tc.kind)
		k := slices.Index(b.design.Spec.ChannelNames(), bad.Channel)
		for j, cp := range bad.Truth.Channels {
			drawn := b.draws[0].Channels[j]
			if j != k {
				if cp != drawn {
					t.Errorf("%s on %s changed channel %d", tc.kind, bad.Channel, j)
				}
				continue
			}
			if got := tc.diff(cp, drawn); math.Abs(got-tc.want) > 1e-9 {
				t.Errorf("%s on %s: change %v, want %v", tc.kind, bad.Channel, got, tc.want)
			}
		}
	}
}

// TestFormBreakingWorlds: a carryover world gives the affected channel a
// kernel of the same total weight that decays at two speeds at once (its
// log-weights are not a straight line, so no geometric kernel fits it, and
// it is largest at lag 0 with a long tail, unlike a delayed peak); a shape
// world gives it a threshold below which nothing responds. Other channels
// keep the drawn response.
func TestFormBreakingWorlds(t *testing.T) {
	b := noiselessBase(t)
	bad, well := twin(t, b, Carryover)
	k := slices.Index(b.design.Spec.ChannelNames(), bad.Channel)
	kb, kw := bad.chans[k].kernel, well.chans[k].kernel
	sum := func(x []float64) (s float64) {
		for _, v := range x {
			s += v
		}
		return s
	}
	if math.Abs(sum(kb)-sum(kw)) > 1e-6*sum(kw) {
		t.Errorf("carryover kernel weight %v, drawn %v: want equal", sum(kb), sum(kw))
	}
	// Ratios of successive weights: 0.1-ish at first, 0.9-ish later.
	if r0, r20 := kb[1]/kb[0], kb[21]/kb[20]; !(r0 < 0.2 && r20 > 0.85) {
		t.Errorf("kernel ratios %v at lag 0 and %v at lag 20: not two speeds", r0, r20)
	}
	for j := range bad.chans {
		if j != k && !slices.Equal(bad.chans[j].kernel, well.chans[j].kernel) {
			t.Errorf("carryover on %s changed channel %d", bad.Channel, j)
		}
	}
	bad, well = twin(t, b, Shape)
	k = slices.Index(b.design.Spec.ChannelNames(), bad.Channel)
	if bad.chans[k].threshold <= 0 || well.chans[k].threshold != 0 {
		t.Fatalf("shape threshold %v (well-specified %v)", bad.chans[k].threshold, well.chans[k].threshold)
	}
	if v, _ := bad.chans[k].sat(0.99 * bad.chans[k].threshold); v != 0 {
		t.Errorf("response %v below the threshold, want 0", v)
	}
}

// TestSeasonIsAYearlyCycleInBeta: over three years the β multiplier of the
// affected channel sweeps the whole cycle, so its extremes are ±seasonSize,
// and it repeats after one period (52.18 weeks: between weeks t and t+52
// the phase moves by 0.18/52.18 of a cycle, a change below 0.03).
func TestSeasonIsAYearlyCycleInBeta(t *testing.T) {
	b := noiselessBase(t)
	bad, well := twin(t, b, Season)
	k := slices.Index(b.design.Spec.ChannelNames(), bad.Channel)
	cp := b.draws[0].Channels[k]
	m := b.design.Media(make([]float64, b.design.N), k, cp)
	r := make([]float64, b.design.N)
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := range r {
		if m[i] == 0 {
			r[i] = math.NaN()
			continue
		}
		r[i] = (bad.Panel.KPI[i] - well.Panel.KPI[i]) / (cp.Beta * m[i])
		lo, hi = min(lo, r[i]), max(hi, r[i])
	}
	if math.Abs(hi-seasonSize) > 0.01 || math.Abs(lo+seasonSize) > 0.01 {
		t.Errorf("β multiplier ranges over [%v, %v], want ±%v", 1+lo, 1+hi, seasonSize)
	}
	for i := 0; i+52 < len(r); i++ {
		if !math.IsNaN(r[i]) && !math.IsNaN(r[i+52]) && math.Abs(r[i]-r[i+52]) > 0.03 {
			t.Fatalf("weeks %d and %d: multipliers %v and %v, want a yearly cycle", i, i+52, 1+r[i], 1+r[i+52])
		}
	}
}

// TestTrueResponseMatchesTheModelsCurves: in a well-specified world the
// world's own horizon response (truth.go) and the model's curves
// (model.Design.NewCurves, written separately) agree, and the world's
// derivative matches a central difference of its own response (step 1e-3
// of current spend; the error of a central difference is O(h²)). The
// model counts the carryover tail only until the kernel falls below 0.1%
// of its peak (model/response.go, tailWeeks) while the world counts it to
// 1e-9, so they agree to 2e-3 relative, not to round-off: measured 1e-4.
func TestTrueResponseMatchesTheModelsCurves(t *testing.T) {
	b := noiselessBase(t)
	w := b.world(11, 0, 0, nil)
	tr := w.trueResponse(13)
	mc := b.design.NewCurves([]model.Params{w.Truth}, 13)
	cur := b.design.CurrentSpend()
	for k := range cur {
		for _, f := range []float64{0.5, 1, 1.5} {
			x := f * cur[k]
			got, dgot := tr.Eval(0, k, x)
			want, dwant := mc.Eval(0, k, x)
			if math.Abs(got-want) > 2e-3*math.Abs(want)+1e-9 || math.Abs(dgot-dwant) > 2e-3*math.Abs(dwant)+1e-12 {
				t.Errorf("channel %d at %.0f: world R %v R' %v, model R %v R' %v", k, x, got, dgot, want, dwant)
			}
			h := 1e-3 * cur[k]
			up, _ := tr.Eval(0, k, x+h)
			dn, _ := tr.Eval(0, k, x-h)
			if fd := (up - dn) / (2 * h); math.Abs(fd-dgot) > 1e-5*math.Abs(dgot)+1e-12 {
				t.Errorf("channel %d at %.0f: derivative %v, central difference %v", k, x, dgot, fd)
			}
		}
	}
}

// TestDriftAndSeasonAffectAChannelThatMatters: a drift or season world
// scales the β of a channel whose mean contribution over the history is at
// least a tenth of the largest channel's, computed here with the model's
// own transforms (model.Design.Media, separate from the world's response
// code). On the demo's point fit some channel is below that (else the
// check would pass vacuously), and 60 worlds of each kind never pick it.
func TestDriftAndSeasonAffectAChannelThatMatters(t *testing.T) {
	b := noiselessBase(t)
	d, p := b.design, b.draws[0]
	contrib := make([]float64, len(p.Channels))
	var top float64
	for k, cp := range p.Channels {
		var m float64
		for _, v := range d.Media(make([]float64, d.N), k, cp) {
			m += v / float64(d.N)
		}
		contrib[k] = cp.Beta * m
		top = max(top, contrib[k])
	}
	var small []string
	for k, v := range contrib {
		if v < 0.1*top {
			small = append(small, d.Spec.Channels[k].Name)
		}
	}
	t.Logf("mean contributions %.0f; below a tenth of the largest: %v", contrib, small)
	if len(small) == 0 {
		t.Fatal("no channel of the demo's fit is below a tenth of the largest: the check would be vacuous")
	}
	for _, kind := range []Kind{Drift, Season} {
		seen := map[string]int{}
		for i := range 60 {
			w := b.world(11, i, 1, []Kind{kind})
			k := slices.Index(d.Spec.ChannelNames(), w.Channel)
			seen[w.Channel]++
			if contrib[k] < 0.1*top {
				t.Errorf("%s world %d affects %s, whose contribution %.0f is below a tenth of the largest %.0f", kind, i, w.Channel, contrib[k], top)
			}
		}
		t.Logf("%s worlds by affected channel: %v", kind, seen)
	}
}
