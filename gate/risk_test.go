package gate

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"sluice/internal/refcheck"
	"sluice/optimize"
	"sluice/policies"
)

// riskReview is a one-channel review whose gains are exactly x: R_d(w) =
// (x_d + 1)·w moved from 0 to 1 over a one-week horizon gains x_d + 1 − 1.
func riskReview(x []float64, downLevel, cvarLevel float64) Review {
	slope := make([][]float64, len(x))
	for d, v := range x {
		slope[d] = []float64{v + 1}
	}
	return Review{
		Channels: []string{"a"}, Current: []float64{0}, Proposed: []float64{1},
		Response:  linearResponse{slope},
		Economics: optimize.Economics{Horizon: 1, Margin: 1, ValuePerKPI: 1},
		Support:   []SupportRange{{0, math.Inf(1)}},
		Policy:    &policies.Policy{Risk: policies.Risk{MaxLossProbability: 0.1, DownsideLevel: downLevel, CVaRLevel: cvarLevel}},
	}
}

func readJSON(t *testing.T, path string, v any) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
}

// Closed-form risk figures for tiny draw sets.
//
// Quantiles: Hyndman & Fan (1996) type 8, the 'value' entries of
// testdata/quantiles_hyndman_fan.json (exact rational evaluation, agreeing
// with R 4.2.2 quantile(type = 8)); sample C is [3.7, -1.2, 0.5, 12.9, 4.4,
// 4.4, 7.8]. P(loss) and the mean counted by hand: C has one loss in seven
// and sums to 32.5. CVaR of C at 0.25 by hand from the Acerbi & Tasche (2002)
// estimator: the worst 1.75 draws are -1.2 and 0.75 of 0.5, so
// (-1.2 + 0.375)/1.75 = -0.825/1.75.
//
// CVaR: Rockafellar & Uryasev (2002), testdata/cvar_expected_shortfall.json
// "outcome30" (exact fractions -213/10 at 0.1 and -70/3 at 0.05, checked
// there with SciPy linprog and R); its 30 outcomes have 21 losses (hand
// count) and sum to -172.6.
func TestRiskClosedForm(t *testing.T) {
	var hf struct {
		Samples map[string]struct {
			X         []float64 `json:"x"`
			Probs     []float64 `json:"probs"`
			Quantiles map[string]struct {
				Value []float64 `json:"value"`
			} `json:"quantiles"`
		} `json:"samples"`
	}
	readJSON(t, "testdata/quantiles_hyndman_fan.json", &hf)
	c := hf.Samples["C"]
	want8 := map[float64]float64{}
	for i, p := range c.Probs {
		want8[p] = c.Quantiles["type8"].Value[i]
	}
	if len(c.X) != 7 || len(want8) == 0 {
		t.Fatalf("reference sample C missing")
	}
	r := RiskOf(riskReview(c.X, 0.05, 0.25), []float64{1})
	near := func(what string, got, want, tol float64) {
		t.Helper()
		if math.Abs(got-want) > tol {
			t.Errorf("%s: got %.15g, want %.15g", what, got, want)
		}
	}
	// Gains are x up to one rounding of x+1−1: tolerance 1e-12.
	near("C p_loss", r.PLoss, 1.0/7, 0)
	near("C expected", r.ExpectedGain, 32.5/7, 1e-12)
	near("C downside (0.05)", r.Downside, want8[0.05], 1e-12)
	near("C p05", r.P05, want8[0.05], 1e-12)
	near("C p50", r.P50, want8[0.5], 1e-12)
	near("C p95", r.P95, want8[0.95], 1e-12)
	near("C cvar (0.25)", r.CVaR, -0.825/1.75, 1e-12)
	near("C moved", r.MovedHorizon, 1, 0)

	var es struct {
		Outcome30 struct {
			Outcome []float64 `json:"outcome"`
			Cases   []struct {
				Alpha float64 `json:"alpha"`
				CVaR  float64 `json:"lower_tail_CVaR"`
			} `json:"cases"`
		} `json:"outcome30"`
	}
	readJSON(t, "testdata/cvar_expected_shortfall.json", &es)
	if len(es.Outcome30.Cases) < 2 {
		t.Fatal("reference outcome30 missing")
	}
	for _, cs := range es.Outcome30.Cases {
		if cs.Alpha > 0.5 {
			continue
		}
		r := RiskOf(riskReview(es.Outcome30.Outcome, 0.05, cs.Alpha), []float64{1})
		near("outcome30 cvar", r.CVaR, cs.CVaR, 1e-12)
		near("outcome30 p_loss", r.PLoss, 21.0/30, 0)
		near("outcome30 expected", r.ExpectedGain, -172.6/30, 1e-12)
	}
}

// Live check: the risk of a Hill/exponential move recomputed independently
// with numpy (testdata/risk_reference.py: quantiles by numpy's
// "median_unbiased" method, which is Hyndman & Fan type 8). Tolerance rel
// 1e-9: two implementations summing the same curves.
func TestRiskAgainstNumpy(t *testing.T) {
	specs := []channelSpec{
		{name: "search", current: 10000, high: 12000, roi: 1.0, roiSD: 0.1, halfSat: 1, shape: 2, lambda: 0.3},
		{name: "video", current: 5000, high: 9000, roi: 1.3, roiSD: 0.4, halfSat: 1, shape: 1.8, lambda: 0.5},
		{name: "tv", current: 8000, high: 9000, roi: 1.1, roiSD: 0.2, halfSat: 1, exp: true, lambda: 0.6},
	}
	plan := []float64{8500, 7000, 7500}
	r := makeReview(specs, plan, 200, 3, parsePolicy(t, lossOnly))
	got := RiskOf(r, plan)

	type param struct {
		Beta    float64 `json:"beta"`
		HalfSat float64 `json:"half_sat"`
		Shape   float64 `json:"shape"`
		Exp     bool    `json:"exp"`
		Lambda  float64 `json:"lambda"`
		Steady  float64 `json:"steady"`
	}
	cr := r.Response.(*curveResponse)
	in := map[string]any{
		"current": r.Current, "plan": plan, "horizon": econ.Horizon, "margin": econ.Margin, "value_per_kpi": econ.ValuePerKPI,
		"weeks": weeks, "spend_weeks": spendWeeks, "downside_level": 0.05, "cvar_level": 0.05,
	}
	var draws [][]param
	for d := range cr.nd {
		var row []param
		for k := range cr.nch {
			c := cr.draws[d*cr.nch+k]
			row = append(row, param{c.beta, c.halfSat, c.shape, c.exp, c.lambda, c.steady})
		}
		draws = append(draws, row)
	}
	in["draws"] = draws
	stdin, _ := json.Marshal(in)
	out := refcheck.Python(t, []string{"numpy"}, "testdata/risk_reference.py", stdin)
	var want Risk
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatalf("reference output %q: %v", out, err)
	}
	if got.PLoss != want.PLoss || got.PLoss == 0 {
		t.Errorf("p_loss %v, numpy %v (want a move with some losses)", got.PLoss, want.PLoss)
	}
	for _, f := range []struct {
		name      string
		got, want float64
	}{{"downside", got.Downside, want.Downside}, {"cvar", got.CVaR, want.CVaR}, {"expected_gain", got.ExpectedGain, want.ExpectedGain},
		{"p05", got.P05, want.P05}, {"p50", got.P50, want.P50}, {"p95", got.P95, want.P95}} {
		if math.Abs(f.got-f.want) > 1e-9*math.Abs(f.want) {
			t.Errorf("%s: %.12g, numpy %.12g", f.name, f.got, f.want)
		}
	}
}
