package rehearsal

import (
	"math"
	"slices"
	"testing"

	"sluice/model"
)

// noiselessBase is the demo's point fit with zero residuals, so a world's
// KPI is the model formula of DESIGN.md (y = base + Σ β·sat(adstock(x)))
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
