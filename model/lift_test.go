package model

import (
	"math"
	"testing"
)

// LiftEffect against the definition written out by hand: geometric
// adstock a_t = x_t + λ a_{t−1}, Hill a^s/(a^s + K^s) with K = κ m/(1−λ)
// (README.md; m the mean weekly spend), and the same with the window's
// spend zeroed, summed over the window and scaled by β.
func TestLiftEffectByHand(t *testing.T) {
	x := []float64{10, 0, 30, 20, 20, 0, 5, 40, 10, 10}
	p := &Panel{Channels: []string{"a"}, Spend: [][]float64{x}}
	spec := NewSpec([]string{"a"}, nil)
	var m float64
	for _, v := range x {
		m += v
	}
	m /= float64(len(x))
	d := &Design{Spec: spec, N: len(x), Spend: p.Spend, MeanSpend: []float64{m}}
	cp := ChannelParams{Decay: 0.6, HalfSat: 0.8, Shape: 1.7, Beta: 250}
	from, to := 2, 4
	hill := func(a float64) float64 {
		K := cp.HalfSat * m / (1 - cp.Decay)
		return math.Pow(a, cp.Shape) / (math.Pow(a, cp.Shape) + math.Pow(K, cp.Shape))
	}
	var a, a0, want float64
	for t, v := range x {
		v0 := v
		if t >= from && t <= to {
			v0 = 0
		}
		a = v + cp.Decay*a
		a0 = v0 + cp.Decay*a0
		if t >= from && t <= to {
			want += cp.Beta * (hill(a) - hill(a0))
		}
	}
	got := d.LiftEffect(0, cp, from, to)
	if math.Abs(got-want) > 1e-12*math.Abs(want) || want <= 0 {
		t.Errorf("LiftEffect %.15g, by hand %.15g", got, want)
	}
	if d.LiftEffect(0, ChannelParams{Decay: 0.5, HalfSat: 1, Shape: 1}, 0, 9) != 0 {
		t.Error("β = 0 has an effect")
	}
}

// LiftEffect against package groundtruth's Lift (written apart from this
// package, cross-checked live against NumPy): the same sums, so 1e-9
// relative, on every channel of the recovery world and three windows.
func TestLiftEffectAgainstGroundTruth(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	d, err := NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	w := TrueWorld(d, sim.Params)
	for k, cp := range sim.Params.Channels {
		for _, win := range [][2]int{{10, 17}, {60, 63}, {140, 155}} {
			got, want := d.LiftEffect(k, cp, win[0], win[1]), w.Lift(k, win[0], win[1])
			if math.Abs(got-want) > 1e-9*math.Abs(want) || want <= 0 {
				t.Errorf("channel %d weeks %v: LiftEffect %.12g, truth %.12g", k, win, got, want)
			}
		}
	}
}
