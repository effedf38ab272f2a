package model

import (
	"testing"
)

func identifyDesign(t *testing.T) *Design {
	t.Helper()
	sim, err := Simulate(&Truth{Seed: 3, Weeks: 104, Intercept: 1e5, Channels: []TrueChannel{
		{Name: "search", MeanSpend: 1e4, Variation: 0.5, Decay: 0.2, HalfSat: 1, Shape: 1.2, Beta: 5e4},
		{Name: "tv", MeanSpend: 2e4, Variation: 0.5, Decay: 0.4, HalfSat: 1.5, Shape: 1.5, Beta: 4e4},
	}})
	if err != nil {
		t.Fatal(err)
	}
	d, err := NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// Parameters placed by hand on, near and away from the default box
// (decay [0, 0.85], κ [0.3, 10], shape [1, 3]): the report names exactly
// the ones within 1% of the range (of the log range for κ), with the side,
// and a channel with β = 0 as of zero effect.
func TestIdentifyByConstruction(t *testing.T) {
	d := identifyDesign(t)
	lo, hi := d.Spec.Channels[0].HalfSaturation, d.Spec.Channels[0].Shape
	p := Params{Channels: []ChannelParams{
		// decay 0.85 on its upper bound; κ 0.3·1.01 is within 1% of the log
		// range ln(10/0.3) = 3.5 above 0.3 (ln 1.01 = 0.01 < 0.035); shape in the middle
		{Decay: 0.85, HalfSat: lo[0] * 1.01, Shape: 2, Beta: 1e4},
		// everything inside; shape 3 − 0.05 is 2.5% of [1, 3] below the top: inside
		{Decay: 0.3, HalfSat: 2, Shape: hi[1] - 0.05, Beta: 0},
	}}
	ids := d.Identify(p)
	got0 := ids[0].OnBound
	if len(got0) != 2 || got0[0].Param != "decay" || got0[0].Side != BoundUpper || got0[1].Param != "half_saturation" || got0[1].Side != BoundLower {
		t.Fatalf("search: %+v, want decay upper and half_saturation lower", got0)
	}
	if ids[0].ZeroEffect || ids[0].Identified() || len(ids[0].Hints) != 2 {
		t.Errorf("search: %+v", ids[0])
	}
	if len(ids[1].OnBound) != 0 || !ids[1].ZeroEffect || ids[1].Identified() || len(ids[1].Hints) != 1 {
		t.Errorf("tv: %+v, want nothing on a bound and a zero effect with one hint", ids[1])
	}
	// Inside the box with an effect: identified.
	p.Channels[1].Beta = 3e4
	if id := d.Identify(p)[1]; !id.Identified() {
		t.Errorf("tv with β > 0: %+v, want identified", id)
	}
	// A bound the spec fixes (lo == hi) is not reported.
	d.Spec.Channels[0].Decay = Range{0.85, 0.85}
	if id := d.Identify(p)[0]; len(id.OnBound) != 1 || id.OnBound[0].Param != "half_saturation" {
		t.Errorf("fixed decay reported: %+v", id.OnBound)
	}
}
