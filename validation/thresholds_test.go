package validation

import (
	"encoding/json"
	"math"
	"reflect"
	"strings"
	"testing"

	"sluice/internal/refcheck"
)

func TestLimitGrades(t *testing.T) {
	up := Limit{Warn: 0.1, Fail: 0.2}
	down := Limit{Warn: 0.1, Fail: 0}
	cases := []struct {
		got, want Status
	}{
		{up.above(0.05), Pass}, {up.above(0.1), Pass}, {up.above(0.15), Warn}, {up.above(0.2), Warn},
		{up.above(0.25), Fail}, {up.above(math.NaN()), Fail}, {up.above(math.Inf(1)), Fail},
		{down.below(0.2), Pass}, {down.below(0.05), Warn}, {down.below(-0.01), Fail}, {down.below(math.NaN()), Fail},
	}
	for i, c := range cases {
		if c.got != c.want {
			t.Errorf("case %d: %s, want %s", i, c.got, c.want)
		}
	}
}

// Every threshold has a key, a default and a documented direction; Set
// overrides by key and refuses what it cannot mean.
func TestThresholdsSet(t *testing.T) {
	th := DefaultThresholds()
	v := reflect.ValueOf(th)
	exported := 0
	for i := range v.NumField() {
		if !v.Type().Field(i).IsExported() {
			continue
		}
		exported++
		if v.Field(i).IsZero() && v.Type().Field(i).Name != "Skill" {
			t.Errorf("%s has no default", v.Type().Field(i).Name)
		}
	}
	names := LimitNames()
	if len(names) != exported {
		t.Errorf("%d names for %d thresholds", len(names), exported)
	}
	if err := th.Set("holdout_wmape", 0.05, 0.08); err != nil || th.HoldoutWMAPE != (Limit{0.05, 0.08}) {
		t.Errorf("set: %v %+v", err, th.HoldoutWMAPE)
	}
	if err := th.Set("break_even", 1.25); err != nil || th.BreakEven != 1.25 {
		t.Errorf("set break_even: %v", err)
	}
	if err := th.Set("coverage", 0.8, 0.7); err != nil || th.Coverage != (Limit{0.8, 0.7}) {
		t.Errorf("set coverage: %v", err)
	}
	for _, c := range []struct {
		key  string
		vals []float64
		want string
	}{
		{"holdout_wmap", []float64{1, 2}, "unknown threshold"},
		{"holdout_wmape", []float64{0.3, 0.2}, "warn 0.3 must come before fail 0.2"},
		{"skill", []float64{0, 0.1}, "must come before"},
		{"lift_z", []float64{2}, "needs a warn and a fail"},
		{"break_even", []float64{1, 2}, "needs one value"},
		{"lift_z", []float64{1, math.NaN()}, "finite"},
	} {
		if err := th.Set(c.key, c.vals...); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("Set(%s, %v): %v, want %q", c.key, c.vals, err, c.want)
		}
	}
}

// The tail probabilities the doc comments of Thresholds quote for the
// defaults, recomputed live with SciPy (scipy.stats t, binom, norm): the
// documented figures are right to the digits given, and the defaults are
// the limits they were computed for.
func TestThresholdTails(t *testing.T) {
	th := DefaultThresholds()
	if th.DriftZ != (Limit{2.5, 3.5}) || th.Coverage != (Limit{0.75, 0.60}) || th.LiftZ != (Limit{1.5, 2}) {
		t.Fatalf("defaults changed: update the documented tails")
	}
	// 9 of 13 weeks is the most that falls below 0.75, 7 below 0.60.
	if 9.0/13 >= th.Coverage.Warn || 10.0/13 < th.Coverage.Warn || 7.0/13 >= th.Coverage.Fail || 8.0/13 < th.Coverage.Fail {
		t.Fatalf("coverage limits no longer fall between 9|10 and 7|8 weeks of 13")
	}
	out := refcheck.Python(t, []string{"scipy"}, "testdata/tails.py", nil)
	var got map[string]float64
	if err := json.Unmarshal(out, &got); err != nil {
		t.Fatalf("%v: %s", err, out)
	}
	documented := map[string][2]float64{ // value, half of the last quoted digit
		"t19_2.5": {0.022, 0.0005}, "t19_3.5": {0.0024, 0.00005},
		"binom_9_of_13": {0.034, 0.0005}, "binom_7_of_13": {0.0009, 0.00005},
		"norm_1.5": {0.13, 0.005}, "norm_2": {0.046, 0.0005},
	}
	for k, d := range documented {
		v, ok := got[k]
		if !ok || math.Abs(v-d[0]) > d[1] {
			t.Errorf("%s: SciPy %.6g, documented %g", k, v, d[0])
		}
	}
}
