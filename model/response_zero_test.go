package model

import "testing"

// R(0) is 0 by definition (README, "The model": the response minus the
// same with w = 0), exactly, for both saturation kinds and both adstocks,
// and R(w) >= 0 for w >= 0 (saturation is increasing). Before the value of
// ExponentialDerivs matched Exponential's, an exponential channel's R(0)
// came out as about -4e-10 in 41 of 117 such curves.
func TestCurveZeroAtZero(t *testing.T) {
	for seed := uint64(1); seed < 40; seed++ {
		sim, err := Simulate(&Truth{Seed: seed, Weeks: 104, Intercept: 1e5, Channels: []TrueChannel{
			{Name: "e", MeanSpend: 1e4, Decay: 0.7, HalfSat: 1.3, Beta: 3e5, Saturation: SaturationExponential},
			{Name: "h", MeanSpend: 1e4, Decay: 0.4, HalfSat: 1.1, Shape: 1.7, Beta: 3e5, Adstock: AdstockDelayed, Peak: 1},
		}})
		if err != nil {
			t.Fatal(err)
		}
		d, err := NewDesign(sim.Panel, sim.Truth.Spec())
		if err != nil {
			t.Fatal(err)
		}
		for _, dec := range []float64{0.1, 0.5, 0.8} {
			for k, cp := range []ChannelParams{{Decay: dec, HalfSat: 0.77, Beta: 3e5}, {Decay: dec, Peak: 1.5, HalfSat: 0.9, Shape: 2.2, Beta: 3e5}} {
				c := d.NewCurve(k, cp, 13)
				if r, _ := c.Eval(0); r != 0 {
					t.Fatalf("seed %d channel %d decay %v: R(0) = %g, want exactly 0", seed, k, dec, r)
				}
				for _, w := range []float64{1e-9, 1e-3, 1, 1e4} {
					if r, _ := c.Eval(w); r < 0 {
						t.Fatalf("seed %d channel %d decay %v: R(%g) = %g < 0", seed, k, dec, w, r)
					}
				}
			}
		}
	}
}
