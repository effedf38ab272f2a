package validation

import (
	"encoding/json"
	"math"
	"testing"

	"sluice/internal/refcheck"
)

// TestPValuesAgainstSciPy: every tail probability the checks use, against
// SciPy's (testdata/rates_reference.py, run live): two-sided Student t and
// normal tails, the binomial CDF of forecast coverage and the prediction
// tail of a metric against simulated values. Tolerance 1e-9 absolute:
// both sides evaluate the same closed forms in double precision.
func TestPValuesAgainstSciPy(t *testing.T) {
	tcases := [][2]float64{{2.0, 19}, {0.5, 3}, {3.5, 7}, {-2.5, 12}}
	zcases := []float64{0, 1.5, 1.96, -2.7}
	bcases := [][3]float64{{9, 13, 0.9}, {7, 13, 0.9}, {13, 13, 0.9}, {0, 5, 0.9}}
	type pred struct {
		Values     []float64 `json:"values"`
		Obs        float64   `json:"obs"`
		LowerWorse bool      `json:"lower_worse"`
		Log        bool      `json:"log"`
	}
	preds := []pred{
		{[]float64{0.10, 0.12, 0.09, 0.15, 0.11, 0.13, 0.08, 0.10}, 0.2, false, true},
		{[]float64{0.10, 0.12, 0.09, 0.15, 0.11, 0.13, 0.08, 0.10}, 0.09, false, true},
		{[]float64{1, 2, 3, 4, 5}, -1, true, false},
	}
	in, _ := json.Marshal(map[string]any{"t": tcases, "normal": zcases, "binomial": bcases, "prediction": preds})
	out := refcheck.Python(t, []string{"numpy", "scipy"}, "testdata/rates_reference.py", in)
	var want struct {
		T, Normal, Binomial, Prediction []float64
	}
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatalf("reference output %q: %v", out, err)
	}
	near := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-9 {
			t.Errorf("%s: %.12g, SciPy %.12g", what, got, want)
		}
	}
	for i, c := range tcases {
		near("t tail", twoSidedT(c[0], c[1]), want.T[i])
	}
	for i, z := range zcases {
		near("normal tail", twoSidedNormal(z), want.Normal[i])
	}
	for i, c := range bcases {
		near("binomial cdf", binomialAtMost(int(c[0]), int(c[1]), c[2]), want.Binomial[i])
	}
	for i, c := range preds {
		nv := &nullValues{}
		for _, v := range c.Values {
			nv.add("k", v)
		}
		near("prediction tail", nv.pValue("k", c.Obs, c.LowerWorse, c.Log), want.Prediction[i])
	}
}

// TestGradeSplitsTheFamilyRate: a family's rate is split evenly over its
// tested checks (Bonferroni); untested checks keep their status; a raw
// threshold is left alone.
func TestGradeSplitsTheFamilyRate(t *testing.T) {
	p := func(v float64) *float64 { return &v }
	cs := []Check{
		{Name: "a", Family: Stability, Status: Pass, PValue: p(0.02)},                 // < 0.05/2: fail
		{Name: "b", Family: Stability, Status: Pass, PValue: p(0.06)},                 // < 0.20/2: warn
		{Name: "c", Family: Accuracy, Status: Pass, PValue: p(0.04)},                  // < 0.05/1: fail
		{Name: "d", Family: Accuracy, Status: Warn},                                   // no p-value: kept
		{Name: "e", Family: Lift, Status: Pass, PValue: p(0.001), RawThreshold: true}, // raw: kept
		{Name: "f", Family: Reconciliation, Status: Fail, PValue: p(0.5)},             // passes
	}
	Grade(cs, DefaultRates)
	want := []Status{Fail, Warn, Fail, Warn, Pass, Pass}
	for i, c := range cs {
		if c.Status != want[i] {
			t.Errorf("%s: %s, want %s", c.Name, c.Status, want[i])
		}
	}
	if cs[0].Rate != 0.025 || cs[2].Rate != 0.05 {
		t.Errorf("rates %v and %v, want 0.025 and 0.05", cs[0].Rate, cs[2].Rate)
	}
}
