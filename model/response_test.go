package model

import (
	"math"
	"testing"
)

// The horizon response, its derivative (marginal ROI) and the ROI of
// Summarize against package groundtruth, which computes them from the
// formulas apart from this package (direct convolution, the full carryover
// tail, a central difference; itself cross-checked live against NumPy).
// Tolerances: the ROI is the same sum, 1e-9 relative. The curve stops
// counting carryover once the kernel falls below 0.1% of its peak; what it
// leaves out is at most that share of a week's media per remaining week,
// so the response and the marginal ROI agree to 0.5% for these decays
// (measured at most 0.022% and 0.085%) and to 1e-9 for the delayed kernel,
// which both count in full.
func TestResponseAgainstGroundTruth(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	// Add a delayed and an exponential channel's view of the same spend.
	spec := sim.Truth.Spec()
	d, err := NewDesign(sim.Panel, spec)
	if err != nil {
		t.Fatal(err)
	}
	for _, alt := range []struct {
		adstock, sat string
		peak         float64
	}{{AdstockGeometric, SaturationHill, 0}, {AdstockDelayed, SaturationHill, 1.5}, {AdstockGeometric, SaturationExponential, 0}} {
		dd := *d
		dd.Spec.Channels = append([]ChannelSpec(nil), d.Spec.Channels...)
		p := sim.Params.Clone()
		for k := range dd.Spec.Channels {
			dd.Spec.Channels[k].Adstock, dd.Spec.Channels[k].Saturation = alt.adstock, alt.sat
			if alt.adstock == AdstockDelayed {
				dd.Spec.Channels[k].MaxLag = 10
				p.Channels[k].Peak = alt.peak
			}
			if alt.sat == SaturationExponential {
				p.Channels[k].Shape = 0
			} else if p.Channels[k].Shape == 0 {
				p.Channels[k].Shape = 1.3
			}
		}
		w := TrueWorld(&dd, p)
		tol := 5e-3
		if alt.adstock == AdstockDelayed {
			tol = 1e-9
		}
		sum := dd.Summarize(p, 1)
		cur := dd.CurrentSpend()
		for k, cp := range p.Channels {
			if got, want := sum[k].ROI, w.ROI(k); math.Abs(got-want) > 1e-9*want || want <= 0 {
				t.Errorf("%s/%s channel %d: ROI %.10g, truth %.10g", alt.adstock, alt.sat, k, got, want)
			}
			cv := dd.NewCurve(k, cp, dd.Spec.Horizon)
			for _, f := range []float64{0.25, 1, 3} {
				s := f * cur[k]
				r, dr := cv.Eval(s)
				wr, wm := w.Response(k, s), w.MarginalROI(k, s)
				mroi := dr / float64(dd.Spec.Horizon)
				if math.Abs(r-wr) > tol*wr || wr <= 0 {
					t.Errorf("%s/%s channel %d at %.3g: response %.10g, truth %.10g", alt.adstock, alt.sat, k, s, r, wr)
				}
				if math.Abs(mroi-wm) > math.Max(tol, 1e-6)*wm || wm <= 0 {
					t.Errorf("%s/%s channel %d at %.3g: marginal ROI %.10g, truth %.10g", alt.adstock, alt.sat, k, s, mroi, wm)
				}
			}
		}
	}
}
