package model

import (
	"encoding/json"
	"testing"
	"time"

	"sluice/internal/refcheck"
)

// TestSciPyPeer fits the same problem with a SciPy peer of the model
// (testdata/scipy_peer.py: the same variable projection with
// scipy.optimize.nnls inside, L-BFGS-B from the same starts) and requires
// sluice's SSE to be no worse than SciPy's by more than 0.1%. The wall
// times of both are logged for the speed comparison (benchmarks, not
// assertions, carry the speed claims).
func TestSciPyPeer(t *testing.T) {
	if testing.Short() {
		t.Skip("runs SciPy")
	}
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	spec := sim.Truth.Spec()
	// The peer implements geometric adstock with Hill saturation only.
	for i := range spec.Channels {
		spec.Channels[i].Saturation = SaturationHill
	}
	d, err := NewDesign(sim.Panel, spec)
	if err != nil {
		t.Fatal(err)
	}
	// The peer solves plain least squares, so the fit does too (no priors).
	set := FitSettings{Seed: 1, NoPriors: true}
	start := time.Now()
	fr, err := d.Fit(sim.Panel.KPI, set)
	if err != nil {
		t.Fatal(err)
	}
	ours := time.Since(start)
	lo, hi := d.bounds()
	rows, cols := d.Fixed.Dims()
	fixed := make([][]float64, rows)
	for i := range fixed {
		fixed[i] = make([]float64, cols)
		for j := range cols {
			fixed[i][j] = d.Fixed.At(i, j)
		}
	}
	in, _ := json.Marshal(map[string]any{
		"y": sim.Panel.KPI, "fixed": fixed, "spend": d.Spend, "mean_spend": d.MeanSpend,
		"lower": lo, "upper": hi, "starts": d.starts(set),
	})
	out := refcheck.Python(t, []string{"scipy"}, "testdata/scipy_peer.py", in)
	var peer struct {
		SSE         float64 `json:"sse"`
		Seconds     float64 `json:"seconds"`
		Evaluations int     `json:"evaluations"`
	}
	if err := json.Unmarshal(out, &peer); err != nil {
		t.Fatalf("peer output %q: %v", out, err)
	}
	t.Logf("sluice SSE %.8g in %v (%d evaluations); SciPy L-BFGS-B SSE %.8g in %.3fs (%d evaluations); ratio %.0fx",
		fr.SSE, ours, fr.Evaluations, peer.SSE, peer.Seconds, peer.Evaluations, peer.Seconds/ours.Seconds())
	if fr.SSE > peer.SSE*1.001 {
		t.Errorf("sluice SSE %.8g worse than SciPy's %.8g by more than 0.1%%", fr.SSE, peer.SSE)
	}
}
