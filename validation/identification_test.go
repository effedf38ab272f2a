package validation

import (
	"testing"

	"sluice/model"
)

// The grading rule of IdentificationChecks on parameters set by hand
// against the default box (decay [0, 0.85], κ [0.05, 10], shape [1, 3]):
// none on a bound passes, one warns, two fail, a zero effect fails, a
// decay at 0 is not graded; the metric counts the graded findings.
func TestIdentificationGrading(t *testing.T) {
	sim, err := model.Simulate(&model.Truth{Seed: 4, Weeks: 104, Intercept: 1e5, Channels: []model.TrueChannel{
		{Name: "a", MeanSpend: 1e4, Decay: 0.3, HalfSat: 1, Beta: 3e4},
		{Name: "b", MeanSpend: 1e4, Decay: 0.3, HalfSat: 1, Beta: 3e4},
		{Name: "c", MeanSpend: 1e4, Decay: 0.3, HalfSat: 1, Beta: 3e4},
		{Name: "d", MeanSpend: 1e4, Decay: 0.3, HalfSat: 1, Beta: 3e4},
		{Name: "e", MeanSpend: 1e4, Decay: 0.3, HalfSat: 1, Beta: 3e4},
	}})
	if err != nil {
		t.Fatal(err)
	}
	d, err := model.NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	p := model.Params{Channels: []model.ChannelParams{
		{Decay: 0.3, HalfSat: 1, Shape: 2, Beta: 1e4},     // inside
		{Decay: 0.3, HalfSat: 1, Shape: 3, Beta: 1e4},     // shape on its upper bound
		{Decay: 0.85, HalfSat: 0.05, Shape: 2, Beta: 1e4}, // decay and κ on bounds
		{Decay: 0.3, HalfSat: 1, Shape: 2, Beta: 0},       // zero effect
		{Decay: 0, HalfSat: 1, Shape: 3, Beta: 1e4},       // decay at 0 (not graded) and shape on a bound
	}}
	want := []struct {
		st Status
		n  float64
	}{{Pass, 0}, {Warn, 1}, {Fail, 2}, {Fail, 1}, {Warn, 1}}
	got := IdentificationChecks(d, p)
	for k, w := range want {
		if got[k].Status != w.st || got[k].Metric != w.n || got[k].Family != Identification || got[k].Scope != p2name(k) {
			t.Errorf("channel %d: %+v, want %s with %v findings", k, got[k], w.st, w.n)
		}
	}
}

func p2name(k int) string { return string(rune('a' + k)) }
