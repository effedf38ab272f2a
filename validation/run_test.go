package validation

import (
	"encoding/json"
	"math"
	"slices"
	"strings"
	"testing"

	"sluice/model"
)

// The simulated worlds below are invented (testdata/truth_*.yaml); their
// truths are the outside reference: a check must pass where the data can
// answer it and fail, scoped to the right channel, where it cannot. The
// thresholds are DefaultThresholds (common practice, no source).

func runTruth(t *testing.T, sim *model.Simulated, p Problem) *Result {
	t.Helper()
	p.Panel, p.Design = sim.Panel, design(t, sim)
	r, err := Run(p, DefaultThresholds(), Settings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	logChecks(t, r.Evidence)
	return r
}

// A clean world (three independently flighted channels, 156 weeks, 5%
// noise) passes every global check, and no check fails at all.
func TestCleanPanelPasses(t *testing.T) {
	if testing.Short() {
		t.Skip("full validation run")
	}
	sim := simulate(t, "testdata/truth_clean.yaml", 0)
	r := runTruth(t, sim, Problem{})
	for _, c := range r.Evidence.Checks {
		if c.Scope == Global && c.Status != Pass {
			t.Errorf("global check %s: %s (%s)", c.Name, c.Status, c.Detail)
		}
		if c.Status == Fail {
			t.Errorf("check %s of %s fails on clean data: %s", c.Name, c.Scope, c.Detail)
		}
	}
	fams := map[Family]bool{}
	for _, c := range r.Evidence.Checks {
		fams[c.Family] = true
	}
	for _, f := range []Family{Accuracy, Recovery, Stability} {
		if !fams[f] {
			t.Errorf("no %s checks", f)
		}
	}
	if _, err := json.Marshal(r.Evidence); err != nil {
		t.Errorf("evidence does not encode: %v", err)
	}
	for k, s := range sim.Summary {
		t.Logf("%s: ROI true %.3f, fitted %.3f", s.Name, s.ROI, r.Recovery.ROI[k])
	}
}

// A short (70 weeks), noisy (20%) world whose spend hardly moves: the
// media add nothing a baseline cannot forecast (skill fails), and the
// refits cannot recover either channel's ROI (recovery fails for both).
func TestFlatNoisyPanelFails(t *testing.T) {
	sim := simulate(t, "testdata/truth_flat.yaml", 0)
	r := runTruth(t, sim, Problem{})
	byName := map[string]Check{}
	for _, c := range r.Evidence.Checks {
		byName[c.Name+"@"+c.Scope] = c
	}
	if c := byName["accuracy/skill@global"]; c.Status != Fail {
		t.Errorf("skill %s (%.3f), want fail", c.Status, c.Metric)
	}
	for _, ch := range sim.Panel.Channels {
		if c := byName["recovery/roi_error@"+ch]; c.Status != Fail {
			t.Errorf("recovery of %s: %s (%.3f), want fail", ch, c.Status, c.Metric)
		}
	}
}

// Display is spent together with search (follows), so the data cannot split
// their effect: recovery or stability fails for both, and for no other
// channel; the global checks still pass (the sum is well determined).
func TestConfoundedChannelsFailScoped(t *testing.T) {
	if testing.Short() {
		t.Skip("full validation run")
	}
	sim := simulate(t, "testdata/truth_confounded.yaml", 0)
	r := runTruth(t, sim, Problem{})
	failed := map[string]bool{}
	for _, c := range r.Evidence.Checks {
		if c.Scope == Global && c.Status == Fail {
			t.Errorf("global check %s fails: %s", c.Name, c.Detail)
		}
		if c.Status == Fail && (c.Family == Recovery || c.Family == Stability) {
			failed[c.Scope] = true
		}
	}
	for ch := range failed {
		if ch != "search" && ch != "display" {
			t.Errorf("channel %s fails, but it is not confounded", ch)
		}
	}
	if !failed["search"] || !failed["display"] {
		t.Errorf("failed channels %v, want search and display", failed)
	}
	// The spend data alone shows why: the pair's spend is collinear.
	for _, c := range r.Evidence.Checks {
		if c.Name == "recovery/spend_collinearity" && (c.Status == Fail) != (c.Scope == "search" || c.Scope == "display") {
			t.Errorf("spend collinearity of %s: %s (VIF %.3g)", c.Scope, c.Status, c.Metric)
		}
	}
}

// concatPanels joins two panels week after week (the second's weeks moved
// to follow the first's).
func concatPanels(a, b *model.Panel) *model.Panel {
	p := &model.Panel{Source: "joined", KPIName: a.KPIName, Channels: a.Channels, Controls: a.Controls}
	p.Weeks = slices.Clone(a.Weeks)
	last := a.Weeks[len(a.Weeks)-1]
	for i := range b.Weeks {
		p.Weeks = append(p.Weeks, last.AddDate(0, 0, 7*(i+1)))
	}
	p.KPI = append(slices.Clone(a.KPI), b.KPI...)
	for k := range a.Spend {
		p.Spend = append(p.Spend, append(slices.Clone(a.Spend[k]), b.Spend[k]...))
	}
	for j := range a.Control {
		p.Control = append(p.Control, append(slices.Clone(a.Control[j]), b.Control[j]...))
	}
	return p
}

// A history whose search effectiveness doubles half-way (two simulated
// two-year worlds, the second with twice search's β, joined) fails the
// drift check for search and for no other channel; the same join without
// the change passes it for every channel.
func TestDriftFails(t *testing.T) {
	for _, mult := range []float64{1, 2} {
		halves := make([]*model.Simulated, 2)
		for i := range halves {
			tr, err := model.LoadTruth("testdata/truth_clean.yaml")
			if err != nil {
				t.Fatal(err)
			}
			tr.Weeks, tr.Trend, tr.Seed = 104, 0, 42+uint64(1000*i) // 104 weeks keep the season's phase
			if i == 1 {
				tr.Channels[0].Beta *= mult
			}
			if halves[i], err = model.Simulate(tr); err != nil {
				t.Fatal(err)
			}
		}
		p := concatPanels(halves[0].Panel, halves[1].Panel)
		d, err := model.NewDesign(p, halves[0].Truth.Spec())
		if err != nil {
			t.Fatal(err)
		}
		fit, err := d.Fit(p.KPI, model.FitSettings{Seed: 1, Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		rob, err := Robustness(d, p.KPI, fit, Settings{Seed: 1, Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range rob.Checks(DefaultThresholds()) {
			if c.Name != "stability/drift" {
				continue
			}
			t.Logf("β×%g %s: %s z %.2f (%s)", mult, c.Scope, c.Status, c.Metric, c.Detail)
			want := Pass
			if mult != 1 && c.Scope == "search" {
				want = Fail
			}
			if c.Status == Fail && want != Fail || want == Fail && c.Status != Fail {
				t.Errorf("β×%g: drift of %s is %s (z %.2f)", mult, c.Scope, c.Status, c.Metric)
			}
		}
		if !rob.DriftScaled {
			t.Errorf("drift not measured against simulated noise")
		}
	}
}

// trueLifts builds lift tests of channels ks over windows from the truth
// (the true incremental KPI, Design.LiftEffect under the true parameters)
// times factor, with standard error se (a share of the true value).
func trueLifts(d *model.Design, sim *model.Simulated, ks []int, windows [][2]int, factor, se float64) []LiftTest {
	var out []LiftTest
	for _, k := range ks {
		for _, w := range windows {
			truth := d.LiftEffect(k, sim.Params.Channels[k], w[0], w[1])
			out = append(out, LiftTest{Channel: sim.Panel.Channels[k], ChannelIndex: k, From: w[0], To: w[1],
				Start: sim.Panel.Weeks[w[0]], End: sim.Panel.Weeks[w[1]].AddDate(0, 0, 6),
				Incremental: factor * truth, StdError: se * truth, Source: "lifts.csv", Line: 2})
		}
	}
	return out
}

// Lift tests that measure the truth agree with a fit of clean data; a lift
// test that found 40% of the true effect contradicts it and fails, scoped
// to its channel.
func TestLiftAgreement(t *testing.T) {
	sim := simulate(t, "testdata/truth_clean.yaml", 0)
	d := design(t, sim)
	fit, err := d.Fit(sim.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	th := DefaultThresholds()
	agree := trueLifts(d, sim, []int{0, 1, 2}, [][2]int{{60, 67}}, 1, 0.15)
	for _, c := range CompareLifts(d, fit, agree, nil).Checks(th) {
		t.Logf("%s %s %s", c.Status, c.Scope, c.Detail)
		if c.Status == Fail {
			t.Errorf("a lift test of the truth fails for %s: %s", c.Scope, c.Detail)
		}
	}
	contra := trueLifts(d, sim, []int{1}, [][2]int{{60, 67}}, 0.4, 0.15)
	cs := CompareLifts(d, fit, contra, nil).Checks(th)
	if len(cs) != 1 || cs[0].Status != Fail || cs[0].Scope != "social" || cs[0].Name != "lift/agreement" {
		t.Fatalf("contradicting lift test: %+v", cs)
	}
	t.Logf("%s %s %s", cs[0].Status, cs[0].Scope, cs[0].Detail)
}

// With draws, the model's own spread enters z: z = (model − measured) /
// √(se² + sd²), sd the SD of the draws' estimates (the brief's definition).
// Draws that scale search's β by known factors give a known sd: the lift
// effect is linear in β.
func TestLiftZWithDraws(t *testing.T) {
	sim := simulate(t, "testdata/truth_clean.yaml", 0)
	d := design(t, sim)
	fit := &model.FitResult{Params: sim.Params}
	lifts := trueLifts(d, sim, []int{0}, [][2]int{{20, 25}}, 0.8, 0.1)
	factors := []float64{0.8, 0.9, 1, 1.1, 1.2}
	var draws Draws
	for _, f := range factors {
		p := sim.Params.Clone()
		p.Channels[0].Beta *= f
		draws.Params = append(draws.Params, p)
	}
	truth := lifts[0].Incremental / 0.8
	sdWant := truth * sd(factors)
	r := CompareLifts(d, fit, lifts, &draws)
	if !relClose(r.ModelSE[0], sdWant, 1e-12) {
		t.Errorf("model SE %.10g, want %.10g", r.ModelSE[0], sdWant)
	}
	zWant := (truth - lifts[0].Incremental) / math.Hypot(lifts[0].StdError, sdWant)
	if !relClose(r.Z[0], zWant, 1e-12) {
		t.Errorf("z %.10g, want %.10g", r.Z[0], zWant)
	}
}

// Calibration: in the confounded world the fit splits the effect of search
// and display wrongly; lift tests of both (their true incremental KPI, 10%
// standard error) added to the objective move both ROIs toward the truth.
func TestCalibrationMovesConfoundedTowardTruth(t *testing.T) {
	for _, seed := range []uint64{42, 99} {
		sim := simulate(t, "testdata/truth_confounded.yaml", seed)
		d := design(t, sim)
		fit, err := d.Fit(sim.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		lifts := trueLifts(d, sim, []int{0, 3}, [][2]int{{40, 47}, {110, 117}}, 1, 0.1)
		cal, err := Calibrate(d, sim.Panel.KPI, fit, lifts, Settings{Seed: 1, Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		for _, k := range []int{0, 3} {
			truth := sim.Summary[k].ROI
			before, after := math.Abs(cal.Before[k]-truth)/truth, math.Abs(cal.After[k]-truth)/truth
			t.Logf("seed %d %s: ROI true %.3f, fit %.3f (%.0f%% off), calibrated %.3f (%.0f%% off)",
				seed, cal.Channels[k], truth, cal.Before[k], 100*before, cal.After[k], 100*after)
			if !(after < before) || after > 0.15 {
				t.Errorf("seed %d %s: calibration moved ROI from %.0f%% to %.0f%% off the truth", seed, cal.Channels[k], 100*before, 100*after)
			}
		}
		t.Logf("in-sample R² %.4f -> %.4f", cal.InSampleR2, cal.R2Cal)
	}
}

// DrawSpread on draws that scale every channel's β by known factors: ROI
// and marginal ROI are linear in β, so ROI's CV is the factors' CV and a
// draw's marginal ROI is the point's times its factor.
func TestDrawSpread(t *testing.T) {
	sim := simulate(t, "testdata/truth_clean.yaml", 0)
	d := design(t, sim)
	fit := &model.FitResult{Params: sim.Params}
	factors := []float64{0.3, 0.6, 0.9, 1.2, 1.5, 1.8, 2.1, 2.4}
	var draws Draws
	for _, f := range factors {
		p := sim.Params.Clone()
		for k := range p.Channels {
			p.Channels[k].Beta *= f
		}
		draws.Params = append(draws.Params, p)
	}
	r, err := DrawSpread(d, fit, draws, 1, Settings{})
	if err != nil {
		t.Fatal(err)
	}
	cvWant := sd(factors) / meanOf(factors)
	for k, s := range sim.Summary {
		if !relClose(r.ROICV[k], cvWant, 1e-9) {
			t.Errorf("%s: ROI CV %.10g, want %.10g", s.Name, r.ROICV[k], cvWant)
		}
		var flip int
		for _, f := range factors {
			if (f*s.MROI > 1) != (s.MROI > 1) {
				flip++
			}
		}
		if want := float64(flip) / float64(len(factors)); r.Flip[k] != want {
			t.Errorf("%s: flip share %v, want %v (mROI %.3f)", s.Name, r.Flip[k], want, s.MROI)
		}
	}
	if _, err := DrawSpread(d, fit, Draws{Params: draws.Params[:1]}, 1, Settings{}); err == nil {
		t.Error("one draw accepted")
	}
	bad := draws.Params[0].Clone()
	bad.Channels = bad.Channels[:1]
	if _, err := DrawSpread(d, fit, Draws{Params: []model.Params{bad, bad}}, 1, Settings{}); err == nil {
		t.Error("draws of another model accepted")
	}
}

// A panel too short for a 13-week holdout after the fit's minimum of
// parameters + 10 weeks is not judged: a warning, not a pass.
func TestBacktestShortPanel(t *testing.T) {
	tr, err := model.LoadTruth("testdata/truth_flat.yaml")
	if err != nil {
		t.Fatal(err)
	}
	tr.Weeks = 35
	sim, err := model.Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	d := design(t, sim)
	r, err := Backtest(d, sim.Panel.KPI, Settings{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	cs := r.Checks(DefaultThresholds())
	if !r.Short || len(cs) != 1 || cs[0].Status != Warn {
		t.Fatalf("short panel: %+v", cs)
	}
}

// A control that only starts in the second half (a promotion flag never on
// before) is constant on the first half and on the holdout's training
// weeks of a panel that starts it late: the checks that need those fits
// are not judged (warnings), and the run still completes.
func TestControlConstantOnPart(t *testing.T) {
	sim := simulate(t, "testdata/truth_clean.yaml", 0)
	p := *sim.Panel
	p.Control = slices.Clone(p.Control)
	promo := slices.Clone(p.Control[1])
	for i := range 150 {
		promo[i] = 0
	}
	promo[152] = 1
	p.Control[1] = promo
	d, err := model.NewDesign(&p, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	r, err := Run(Problem{Panel: &p, Design: d}, DefaultThresholds(), Settings{Seed: 1, Workers: 2, Replicates: 4})
	if err != nil {
		t.Fatal(err)
	}
	var drift, holdout int
	for _, c := range r.Evidence.Checks {
		if c.Name == "stability/drift" && c.Status == Warn && strings.Contains(c.Detail, "not judged") {
			drift++
		}
		if c.Name == "accuracy/holdout_wmape" && c.Status == Warn && strings.Contains(c.Detail, `"promo"`) {
			holdout++
		}
	}
	if drift != 3 || holdout != 1 {
		logChecks(t, r.Evidence)
		t.Errorf("%d drift and %d holdout checks not judged, want 3 and 1", drift, holdout)
	}
}
