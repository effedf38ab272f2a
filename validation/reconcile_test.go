package validation

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"sluice/model"
)

// headPanel returns the first n weeks of p.
func headPanel(p *model.Panel, n int) *model.Panel {
	q := *p
	q.Weeks, q.KPI = p.Weeks[:n:n], p.KPI[:n:n]
	q.Spend, q.Control = nil, nil
	for _, x := range p.Spend {
		q.Spend = append(q.Spend, x[:n:n])
	}
	for _, x := range p.Control {
		q.Control = append(q.Control, x[:n:n])
	}
	return &q
}

// forecastWorld simulates 169 weeks of the clean world, fits the first 156
// and forecasts the last 13 under plan (weekly spend per channel, scaled
// from the last quarter's by planScale). The band is the point forecast ±
// 1.645 residual SDs (a normal 90% band; the world's noise is Gaussian AR(1)).
func forecastWorld(t *testing.T, planScale float64) (*model.Simulated, *Forecast) {
	t.Helper()
	tr, err := model.LoadTruth("testdata/truth_clean.yaml")
	if err != nil {
		t.Fatal(err)
	}
	tr.Weeks = 169
	sim, err := model.Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	train := headPanel(sim.Panel, 156)
	d, err := model.NewDesign(train, tr.Spec())
	if err != nil {
		t.Fatal(err)
	}
	fit, err := d.Fit(train.KPI, model.FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	sigma := model.FitStats(train.KPI, fit.Residuals, d.Spec.NumParams()).Sigma
	plan := map[string]float64{}
	planned := *sim.Panel
	planned.Spend = nil
	for k, w := range d.CurrentSpend() {
		plan[train.Channels[k]] = planScale * w
		x := slices.Clone(sim.Panel.Spend[k])
		for i := 156; i < 169; i++ {
			x[i] = planScale * w
		}
		planned.Spend = append(planned.Spend, x)
	}
	dp, err := model.NewDesignScaled(&planned, tr.Spec(), d.ScaleOf(train.Weeks[0]))
	if err != nil {
		t.Fatal(err)
	}
	pred := dp.Predict(fit.Params)[156:]
	var band Band
	for _, v := range pred {
		band.P05 = append(band.P05, v-1.645*sigma)
		band.P50 = append(band.P50, v)
		band.P95 = append(band.P95, v+1.645*sigma)
	}
	fc := NewForecast(d, train.Weeks[0], fit.Params, plan, band, map[string]string{"data_sha256": "test"})
	fc.Source = "q1.json"
	return sim, fc
}

// A forecast of the clean world, reconciled with the weeks that followed:
// the band covers the actual KPI and the re-forecast is unbiased.
func TestReconcileCleanPasses(t *testing.T) {
	sim, fc := forecastWorld(t, 1)
	r, err := Reconcile(sim.Panel, fc)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range r.Checks(DefaultThresholds()) {
		t.Logf("%s %s %.3f %s", c.Status, c.Name, c.Metric, c.Detail)
		if c.Status != Pass {
			t.Errorf("%s: %s", c.Name, c.Status)
		}
	}
	if r.Weeks != 13 {
		t.Errorf("reconciled %d weeks, want 13", r.Weeks)
	}
}

// A plan that was not followed (it cut every channel to 30% of its spend;
// the spend went on as before) is not blamed on the model: the raw band,
// made for the plan, misses the actual KPI, the band moved to the spend
// made covers it.
func TestReconcilePlanNotFollowed(t *testing.T) {
	sim, fc := forecastWorld(t, 0.3)
	r, err := Reconcile(sim.Panel, fc)
	if err != nil {
		t.Fatal(err)
	}
	var raw int
	for i, y := range r.Actual {
		if fc.Band.P05[i] <= y && y <= fc.Band.P95[i] {
			raw++
		}
	}
	t.Logf("raw band covers %d of 13 weeks, moved band %.0f%%, spend %+.0f%% against plan", raw, 100*r.Coverage, 100*r.SpendGap)
	if raw > 3 {
		t.Errorf("the raw band covers %d of 13 weeks; the test's plan should have missed", raw)
	}
	for _, c := range r.Checks(DefaultThresholds()) {
		if c.Status != Pass {
			t.Errorf("%s: %s (%s)", c.Name, c.Status, c.Detail)
		}
	}
	if !(r.SpendGap > 1) {
		t.Errorf("spend gap %.2f, want the actual spend over twice the plan", r.SpendGap)
	}
}

// A world that changed after the forecast (demand 20% lower than the
// model's baseline) fails both checks.
func TestReconcileShiftFails(t *testing.T) {
	sim, fc := forecastWorld(t, 1)
	p := *sim.Panel
	p.KPI = slices.Clone(p.KPI)
	for i := 156; i < 169; i++ {
		p.KPI[i] *= 0.8
	}
	r, err := Reconcile(&p, fc)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range r.Checks(DefaultThresholds()) {
		t.Logf("%s %s %.3f %s", c.Status, c.Name, c.Metric, c.Detail)
		if c.Status != Fail {
			t.Errorf("%s: %s, want fail", c.Name, c.Status)
		}
	}
	if !(r.Bias < -0.1) {
		t.Errorf("bias %.3f, want below -10%%", r.Bias)
	}
}

// Only the weeks with data are reconciled; a forecast none of whose weeks
// are in the data yet is pending, not an error.
func TestReconcilePartialAndPending(t *testing.T) {
	sim, fc := forecastWorld(t, 1)
	r, err := Reconcile(headPanel(sim.Panel, 161), fc)
	if err != nil {
		t.Fatal(err)
	}
	if r.Weeks != 5 {
		t.Errorf("reconciled %d weeks, want 5", r.Weeks)
	}
	_, err = Reconcile(headPanel(sim.Panel, 156), fc)
	if err == nil || !strings.Contains(err.Error(), ErrNoWeeks.Error()) {
		t.Errorf("forecast after the data: %v", err)
	}
}

// The file round-trips, a decision record holding it under "forecast" reads
// the same, and LoadForecasts reads a directory in name order.
func TestForecastFile(t *testing.T) {
	_, fc := forecastWorld(t, 1)
	var buf bytes.Buffer
	if err := WriteForecast(&buf, fc); err != nil {
		t.Fatal(err)
	}
	got, err := ParseForecast(buf.Bytes(), "a.json")
	if err != nil {
		t.Fatal(err)
	}
	var again bytes.Buffer
	WriteForecast(&again, got)
	if !bytes.Equal(buf.Bytes(), again.Bytes()) {
		t.Error("forecast does not round-trip")
	}
	rec := append(append([]byte(`{"version": 1, "verdict": "approve", "forecast": `), buf.Bytes()...), '}')
	fromRecord, err := ParseForecast(rec, "decision.json")
	if err != nil {
		t.Fatal(err)
	}
	var third bytes.Buffer
	WriteForecast(&third, fromRecord)
	if !bytes.Equal(buf.Bytes(), third.Bytes()) {
		t.Error("forecast read from a record differs")
	}
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "b.json"), buf.Bytes(), 0o644)
	os.WriteFile(filepath.Join(dir, "a.json"), rec, 0o644)
	os.WriteFile(filepath.Join(dir, "notes.txt"), []byte("not a forecast"), 0o644)
	all, err := LoadForecasts(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(all) != 2 || filepath.Base(all[0].Source) != "a.json" || filepath.Base(all[1].Source) != "b.json" {
		t.Errorf("loaded %d forecasts", len(all))
	}
}

// Forecast files with problems are refused with the key path or the
// line:column of the problem.
func TestParseForecastErrors(t *testing.T) {
	_, fc := forecastWorld(t, 1)
	var buf bytes.Buffer
	WriteForecast(&buf, fc)
	good := buf.String()
	cases := []struct {
		name, from, to, want string
	}{
		{"syntax", `"weeks": 13`, `"weeks": 13,,`, "f.json:"},
		{"type", `"weeks": 13`, `"weeks": "13"`, "f.json:6:16: weeks:"},
		{"unknown key", `"weeks": 13`, `"weeks": 13, "wekes": 2`, `unknown field "wekes"`},
		{"bad start", `"start": "`, `"start": "x`, "f.json: start:"},
		{"band length", `"weeks": 13`, `"weeks": 12`, "f.json: band.p"},
		{"plan missing", `"search": `, `"seek": `, "f.json: plan"},
		{"mean spend", `"mean_spend": `, `"mean_spend": -`, "mean_spend"},
		{"fixed columns", `"intercept"`, `"constant"`, "f.json: model.fixed_columns[0]"},
		{"not an object", `{`, `[{`, "f.json:"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !strings.Contains(good, c.from) {
				t.Fatalf("%q not in the file", c.from)
			}
			_, err := ParseForecast([]byte(strings.Replace(good, c.from, c.to, 1)), "f.json")
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("got %v, want %q", err, c.want)
			}
		})
	}
	// The band must be ordered, finite.
	bad := *fc
	bad.Band.P05 = slices.Clone(fc.Band.P05)
	bad.Band.P05[3] = math.Inf(1)
	if err := bad.check(""); err == nil {
		t.Error("infinite band accepted")
	}
}
