package groundtruth

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"

	"sluice/internal/refcheck"
)

// testWorld is an invented three-channel world: geometric Hill, delayed
// Hill, geometric exponential, 104 weeks, horizon 13.
func testWorld() *World {
	rng := rand.New(rand.NewPCG(21, 1))
	n := 104
	spend := func(mean float64, dark float64) []float64 {
		x := make([]float64, n)
		for t := range x {
			if rng.Float64() < dark {
				continue
			}
			x[t] = math.Round(mean*math.Exp(0.5*rng.NormFloat64())*100) / 100
		}
		return x
	}
	base := make([]float64, n)
	for t := range base {
		base[t] = 50000 + 100*float64(t) + 3000*math.Sin(2*math.Pi*float64(t)/52.18)
	}
	return &World{Horizon: 13, Base: base, Channels: []Channel{
		{Spend: spend(8000, 0), Adstock: "geometric", Saturation: "hill", Decay: 0.4, HalfSat: 0.3, Shape: 1.4, Beta: 30000},
		{Spend: spend(12000, 0.2), Adstock: "delayed", Saturation: "hill", Decay: 0.6, Peak: 2, MaxLag: 8, HalfSat: 1.5, Shape: 2, Beta: 40000},
		{Spend: spend(5000, 0.1), Adstock: "geometric", Saturation: "exponential", Decay: 0.2, HalfSat: 1, Beta: 15000},
	}}
}

// TestAgainstNumPy cross-checks every figure against testdata/truth_ref.py
// (NumPy/SciPy, run live). Tolerances: mean path, ROI and response are the
// same sums in another order, 1e-10 relative; the marginal ROI is a central
// difference of step 1e-4·s against the analytic derivative, whose error is
// O(h²·R”') — 1e-6 relative is ample; the optimum: SLSQP and the grid
// search stop at different points of a flat maximum, so the plans agree
// to 1% of the budget and the objective to 1e-6 relative, ours never more
// than that below.
func TestAgainstNumPy(t *testing.T) {
	w := testWorld()
	if err := w.Check(); err != nil {
		t.Fatal(err)
	}
	type point struct {
		k int
		s float64
	}
	var pts []point
	for k := range w.Channels {
		c := w.CurrentSpend(k)
		pts = append(pts, point{k, 0.5 * c}, point{k, c}, point{k, 2 * c})
	}
	lo := []float64{2000, 3000, 1000}
	hi := []float64{20000, 25000, 12000}
	budget := w.CurrentSpend(0) + w.CurrentSpend(1) + w.CurrentSpend(2)
	in := map[string]any{"horizon": w.Horizon, "base": w.Base, "value": 1.0, "budget": budget, "lo": lo, "hi": hi}
	var chs []map[string]any
	for _, c := range w.Channels {
		chs = append(chs, map[string]any{"spend": c.Spend, "adstock": c.Adstock, "saturation": c.Saturation, "decay": c.Decay,
			"peak": c.Peak, "max_lag": c.MaxLag, "half_saturation": c.HalfSat, "shape": c.Shape, "beta": c.Beta})
	}
	in["channels"] = chs
	var ps [][2]float64
	for _, p := range pts {
		ps = append(ps, [2]float64{float64(p.k), p.s})
	}
	in["points"] = ps
	liftWindows := [][3]int{{0, 10, 17}, {1, 40, 45}, {2, 90, 103}}
	in["lifts"] = liftWindows
	stdin, _ := json.Marshal(in)
	out := refcheck.Python(t, []string{"numpy", "scipy"}, "testdata/truth_ref.py", stdin)
	var ref struct {
		MeanPath     []float64 `json:"mean_path"`
		ROI          []float64 `json:"roi"`
		Response     []float64 `json:"response"`
		MROI         []float64 `json:"mroi"`
		Optimum      []float64 `json:"optimum"`
		Lifts        []float64 `json:"lifts"`
		OptimumValue float64   `json:"optimum_value"`
	}
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatalf("reference: %v\n%s", err, out)
	}
	rel := func(a, b float64) float64 { return math.Abs(a-b) / math.Max(math.Abs(b), 1e-300) }
	for i, v := range w.MeanPath() {
		if rel(v, ref.MeanPath[i]) > 1e-10 {
			t.Fatalf("mean path week %d: %.12g, NumPy %.12g", i, v, ref.MeanPath[i])
		}
	}
	for k := range w.Channels {
		if got := w.ROI(k); rel(got, ref.ROI[k]) > 1e-10 || got <= 0 {
			t.Errorf("ROI %d: %.12g, NumPy %.12g", k, got, ref.ROI[k])
		}
	}
	for i, p := range pts {
		if got := w.Response(p.k, p.s); rel(got, ref.Response[i]) > 1e-10 || got <= 0 {
			t.Errorf("response %d at %g: %.12g, NumPy %.12g", p.k, p.s, got, ref.Response[i])
		}
		if got := w.MarginalROI(p.k, p.s); rel(got, ref.MROI[i]) > 1e-6 || got <= 0 {
			t.Errorf("marginal ROI %d at %g: %.12g, NumPy %.12g", p.k, p.s, got, ref.MROI[i])
		}
	}
	for i, l := range liftWindows {
		if got := w.Lift(l[0], l[1], l[2]); rel(got, ref.Lifts[i]) > 1e-10 || got <= 0 {
			t.Errorf("lift %v: %.12g, NumPy %.12g", l, got, ref.Lifts[i])
		}
	}
	opt, err := w.Optimum(1, budget, lo, hi)
	if err != nil {
		t.Fatal(err)
	}
	value := func(p []float64) float64 {
		var v float64
		for k := range p {
			v += w.Response(k, p[k]) - float64(w.Horizon)*p[k]
		}
		return v
	}
	var sum float64
	for k, v := range opt {
		sum += v
		if math.Abs(v-ref.Optimum[k]) > 0.01*budget {
			t.Errorf("optimum channel %d: %.6g, SciPy %.6g", k, v, ref.Optimum[k])
		}
	}
	if rel(sum, budget) > 1e-9 {
		t.Errorf("optimum spends %g, budget %g", sum, budget)
	}
	if got := value(opt); got < ref.OptimumValue-1e-6*math.Abs(ref.OptimumValue) {
		t.Errorf("optimum value %.10g below SciPy's %.10g", got, ref.OptimumValue)
	}
	// The optimum is not the status quo (else the check is vacuous).
	if g := w.Gain(opt, []float64{w.CurrentSpend(0), w.CurrentSpend(1), w.CurrentSpend(2)}, 1); !(g > 0) {
		t.Errorf("optimum gains %g over the status quo", g)
	}
}
