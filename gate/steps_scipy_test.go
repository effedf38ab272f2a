package gate

import (
	"encoding/json"
	"math"
	"testing"

	"sluice/internal/refcheck"
)

// stepsPolicy has every kind of limit, as absolute money over the horizon,
// and a support guard too loose to bind, so the safe steps are decided by
// the risk limits alone.
const stepsPolicy = `version: 1
name: steps
risk:
  max_loss_probability: 0.15
  downside_level: 0.05
  downside_floor: -2500
  cvar_level: 0.05
  cvar_floor: -4000
  min_expected_gain: 0
support:
  high_multiple: 10
roles:
  finance_partner: {}
signoffs:
  - name: every_decision
    roles: [finance_partner]
    when: {always: true}
`

// TestSafeStepsAgainstSciPy: every channel's safe step, the combined
// budget-consistent plan and its risk figures, recomputed from the README's
// definitions by testdata/risk_reference.py (mode "steps": NumPy for the
// curves, a dense scan and bisection for the steps, SciPy's mquantiles
// with alphap = betap = 1/3 — Hyndman & Fan type 8 — for the downside).
// Tolerances: the gate reports a step that passes whose bracket's failing
// end is at most 1e-4 further (Settings.Tolerance), the reference bisects to
// 1e-9, so a step agrees to 1e-4 + 1e-9; the plan's scale likewise; risk
// figures of one plan agree to 1e-9 relative (two implementations summing
// the same curves).
func TestSafeStepsAgainstSciPy(t *testing.T) {
	if testing.Short() {
		t.Skip("a live reference run of several seconds")
	}
	specs := []channelSpec{
		{name: "search", current: 10000, high: 12000, roi: 0.9, roiSD: 0.05, halfSat: 1, shape: 2, lambda: 0.3},
		{name: "video", current: 5000, high: 9000, roi: 1.5, roiSD: 0.3, halfSat: 0.8, shape: 1.8, lambda: 0.5},
		{name: "tv", current: 8000, high: 12000, roi: 1.3, roiSD: 0.12, halfSat: 1, exp: true, lambda: 0.6},
	}
	proposed := []float64{7000, 7000, 9000}
	r := makeReview(specs, proposed, 300, 5, parsePolicy(t, stepsPolicy))
	d := run(t, r)

	type param struct {
		Beta    float64 `json:"beta"`
		HalfSat float64 `json:"half_sat"`
		Shape   float64 `json:"shape"`
		Exp     bool    `json:"exp"`
		Lambda  float64 `json:"lambda"`
		Steady  float64 `json:"steady"`
	}
	cr := r.Response.(*curveResponse)
	var draws [][]param
	for i := range cr.nd {
		var row []param
		for k := range cr.nch {
			c := cr.draws[i*cr.nch+k]
			row = append(row, param{c.beta, c.halfSat, c.shape, c.exp, c.lambda, c.steady})
		}
		draws = append(draws, row)
	}
	lim := r.Policy.Risk
	in := map[string]any{"mode": "steps", "current": r.Current, "proposed": proposed, "draws": draws,
		"horizon": econ.Horizon, "margin": econ.Margin, "value_per_kpi": econ.ValuePerKPI, "weeks": weeks, "spend_weeks": spendWeeks,
		"limits": map[string]float64{"max_loss_probability": lim.MaxLossProbability, "downside_level": lim.DownsideLevel,
			"downside_floor": *lim.DownsideFloor, "cvar_level": lim.CVaRLevel, "cvar_floor": *lim.CVaRFloor,
			"min_expected_gain": *lim.MinExpectedGain}}
	stdin, _ := json.Marshal(in)
	out := refcheck.Python(t, []string{"numpy", "scipy"}, "testdata/risk_reference.py", stdin)
	var want struct {
		Tau                              []float64 `json:"tau"`
		Scale                            float64   `json:"scale"`
		Plan                             []float64 `json:"plan"`
		PLoss, Downside, CVaR, ExpectedG float64
	}
	var raw map[string]any
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatalf("reference output %q: %v", out, err)
	}
	_ = json.Unmarshal(out, &raw)
	t.Logf("gate: verdict %s, steps %v, scale %v; reference steps %v, scale %v", d.Verdict,
		[]float64{d.Moves[0].SafeStep, d.Moves[1].SafeStep, d.Moves[2].SafeStep}, d.PlanScale, want.Tau, want.Scale)
	interior := 0
	for k, m := range d.Moves {
		if want.Tau[k] > 0 && want.Tau[k] < 1 {
			interior++
		}
		if math.Abs(m.SafeStep-want.Tau[k]) > 1e-4+1e-9 {
			t.Errorf("%s: safe step %.6f, reference %.6f", m.Channel, m.SafeStep, want.Tau[k])
		}
	}
	if interior == 0 {
		t.Fatal("scenario: no channel's safe step is strictly between 0 and 1, so the comparison proves little")
	}
	if d.Verdict != Downsize {
		t.Fatalf("verdict %s, want downsize (reasons %q)", d.Verdict, d.Reasons)
	}
	if math.Abs(d.PlanScale-want.Scale) > 1e-4+1e-9 {
		t.Errorf("plan scale %.6f, reference %.6f", d.PlanScale, want.Scale)
	}
	for k := range want.Plan {
		moved := math.Abs(proposed[k] - r.Current[k])
		if math.Abs(d.ApprovedPlan[k]-want.Plan[k]) > (1e-4+1e-9)*moved+1e-9 {
			t.Errorf("%s: approved %.4f, reference %.4f", r.Channels[k], d.ApprovedPlan[k], want.Plan[k])
		}
	}
	// The approved plan's risk figures against SciPy's, on the reference's
	// own plan when the plans agree to round-off, else only the mean gain's
	// order.
	got := RiskOf(r, want.Plan)
	for _, f := range []struct {
		name      string
		got, want float64
	}{{"p_loss", got.PLoss, raw["p_loss"].(float64)}, {"downside", got.Downside, raw["downside"].(float64)},
		{"cvar", got.CVaR, raw["cvar"].(float64)}, {"expected_gain", got.ExpectedGain, raw["expected_gain"].(float64)}} {
		if math.Abs(f.got-f.want) > 1e-9*math.Abs(f.want)+1e-9 {
			t.Errorf("%s of the reference plan: %.12g, SciPy %.12g", f.name, f.got, f.want)
		}
	}
}
