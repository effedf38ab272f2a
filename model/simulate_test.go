package model

import (
	"math"
	"strings"
	"testing"
)

// A drift that starts late: the simulated effectiveness path is flat until
// drift_start_week and then ramps linearly to 1 + drift, by the stated
// formula β(t) = β·(1 + drift·max(0, t−s)/(n−1−s)), checked week by week.
func TestSimulateLateDrift(t *testing.T) {
	tr := &Truth{Seed: 2, Weeks: 60, Intercept: 1000, NoiseSD: 0.01, Channels: []TrueChannel{
		{Name: "a", MeanSpend: 100, Decay: 0.3, HalfSat: 1, Beta: 500, Drift: -0.4, DriftStart: 40},
	}}
	sim, err := Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range sim.EffectPath[0] {
		want := 500.0
		if i > 40 {
			want = 500 * (1 - 0.4*float64(i-40)/19)
		}
		if math.Abs(v-want) > 1e-9 {
			t.Fatalf("week %d: β %g, want %g", i, v, want)
		}
	}
	tr.Channels[0].DriftStart = 59
	if _, err := Simulate(tr); err == nil || !strings.Contains(err.Error(), "drift_start_week") {
		t.Errorf("a drift starting in the last week: %v, want an error naming drift_start_week", err)
	}
}
