package validation

import (
	"encoding/json"
	"testing"

	"sluice/internal/refcheck"
)

// SpendVIF against statsmodels' variance_inflation_factor (Debian
// python3-statsmodels 0.13.5) on the design of the confounded world: each
// spend column regressed on the fixed columns and the other channels'
// spend. Tolerance rel 1e-10 (both solve the same least-squares problem, by
// different factorizations).
func TestSpendVIFStatsmodels(t *testing.T) {
	sim := simulate(t, "testdata/truth_confounded.yaml", 0)
	d := design(t, sim)
	_, nf := d.Fixed.Dims()
	var exog [][]float64
	for i := range d.N {
		row := make([]float64, 0, nf+len(d.Spend))
		for j := range nf {
			row = append(row, d.Fixed.At(i, j))
		}
		for _, x := range d.Spend {
			row = append(row, x[i])
		}
		exog = append(exog, row)
	}
	var cols []int
	for k := range d.Spend {
		cols = append(cols, nf+k)
	}
	in, _ := json.Marshal(map[string]any{"exog": exog, "columns": cols})
	out := refcheck.Python(t, []string{"statsmodels"}, "testdata/vif_check.py", in)
	var ref struct{ VIF []float64 }
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatalf("%v: %s", err, out)
	}
	got := SpendVIF(d)
	for k := range got {
		if !relClose(got[k], ref.VIF[k], 1e-10) {
			t.Errorf("%s: VIF %.12g, statsmodels %.12g", sim.Panel.Channels[k], got[k], ref.VIF[k])
		}
	}
	t.Logf("VIF %v (statsmodels %v)", got, ref.VIF)
}
