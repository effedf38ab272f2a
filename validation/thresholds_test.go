package validation

import (
	"math"
	"reflect"
	"strings"
	"testing"
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
	for i := range v.NumField() {
		if v.Field(i).IsZero() && v.Type().Field(i).Name != "Skill" {
			t.Errorf("%s has no default", v.Type().Field(i).Name)
		}
	}
	names := LimitNames()
	if len(names) != v.NumField() {
		t.Errorf("%d names for %d thresholds", len(names), v.NumField())
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
