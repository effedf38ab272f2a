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

func TestWellSpecifiedWorldIsTheModel(t *testing.T) {
	b := noiselessBase(t)
	w := b.world(11, 0, 0, nil)
	want := b.design.Predict(b.draws[0])
	for i := range want {
		if math.Abs(w.Panel.KPI[i]-math.Max(0, want[i])) > 1e-9*math.Abs(want[i]) {
			t.Fatalf("week %d: KPI %v, model %v", i, w.Panel.KPI[i], want[i])
		}
	}
	if !slices.Equal(w.Truth.Channels, b.draws[0].Channels) {
		t.Errorf("truth %+v differs from the draw %+v", w.Truth.Channels, b.draws[0].Channels)
	}
}

// TestDriftIsALinearTrendInBeta: the departure divided by the channel's
// media term must be a straight line from 0 to ±driftSize.
func TestDriftIsALinearTrendInBeta(t *testing.T) {
	b := noiselessBase(t)
	bad, well := twin(t, b, Drift)
	k := slices.Index(b.design.Spec.ChannelNames(), bad.Channel)
	cp := b.draws[0].Channels[k]
	m := b.design.Media(make([]float64, b.design.N), k, cp)
	n := b.design.N
	end := (bad.Panel.KPI[n-1] - well.Panel.KPI[n-1]) / (cp.Beta * m[n-1])
	if math.Abs(math.Abs(end)-driftSize) > 1e-6 {
		t.Fatalf("drift at the last week %v, want ±%v", end, driftSize)
	}
	for i := range n {
		if m[i] == 0 {
			continue
		}
		got := (bad.Panel.KPI[i] - well.Panel.KPI[i]) / (cp.Beta * m[i])
		if want := end * float64(i) / float64(n-1); math.Abs(got-want) > 1e-6 {
			t.Fatalf("week %d: β multiplier %v, want %v", i, 1+got, 1+want)
		}
	}
	if got, want := bad.Truth.Channels[k].Beta, cp.Beta*(1+end); math.Abs(got-want) > 1e-9*want {
		t.Errorf("end-of-history β %v, want %v", got, want)
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
		{Carryover, func(a, d model.ChannelParams) float64 { return math.Abs(a.Decay - d.Decay) }, carryoverShift},
		{Break, func(a, d model.ChannelParams) float64 { return math.Abs(a.Beta/d.Beta - 1) }, breakSize},
		{Drift, func(a, d model.ChannelParams) float64 { return math.Abs(a.Beta/d.Beta - 1) }, driftSize},
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
	// Shape: the true Hill shape moves by shapeShift (or down to 0.5).
	bad, _ := twin(t, b, Shape)
	k := slices.Index(b.design.Spec.ChannelNames(), bad.Channel)
	s0, s1 := b.draws[0].Channels[k].Shape, bad.Truth.Channels[k].Shape
	if d := math.Abs(s1 - s0); math.Abs(d-shapeShift) > 1e-9 && s1 != 0.5 {
		t.Errorf("shape %v → %v, want a change of %v", s0, s1, shapeShift)
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
