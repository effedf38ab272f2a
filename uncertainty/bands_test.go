package uncertainty

import (
	"encoding/json"
	"math"
	"testing"

	"sluice/internal/refcheck"
	"sluice/model"
)

// Band quantiles are Hyndman–Fan type 8, and the response grid's top is
// twice the largest 4-week mean spend: checked against numpy (testdata/
// bands_ref.py, Debian python3-numpy; quantile method "median_unbiased" is
// numpy's name for definition 8) on samples of the sizes the bootstrap
// produces, with ties, and on the spend of a simulated world's channels
// (dark weeks included) and a series shorter than 4 weeks. Tolerance rel
// 1e-12 (summation order only).
func TestBandsNumpy(t *testing.T) {
	type input struct {
		X     []float64 `json:"x"`
		Spend []float64 `json:"spend"`
	}
	w := testWorld(t, 114)
	short := &model.Design{Spend: [][]float64{{120, 0, 340}}}
	designs := []*model.Design{w.d, w.d, w.d, w.d, short}
	var cases []input
	for i, n := range []int{7, 20, 200, 987, 3} {
		rng := Stream(88, i)
		c := input{X: make([]float64, n), Spend: designs[i].Spend[i%4]}
		for j := range c.X {
			c.X[j] = math.Exp(rng.NormFloat64())
			if j%5 == 0 {
				c.X[j] = 1 // ties
			}
		}
		cases = append(cases, c)
	}
	in, err := json.Marshal(cases)
	if err != nil {
		t.Fatal(err)
	}
	out := refcheck.Python(t, []string{"numpy"}, "testdata/bands_ref.py", in)
	var want []struct {
		Band []float64 `json:"band"`
		Max4 float64   `json:"max4"`
	}
	if err := json.Unmarshal(out, &want); err != nil || len(want) != len(cases) {
		t.Fatalf("reference output %q: %v", out, err)
	}
	for i, c := range cases {
		b := NewBand(c.X)
		got := []float64{b.Median, b.P05, b.P10, b.P90, b.P95}
		for j, name := range []string{"median", "p05", "p10", "p90", "p95"} {
			checkRel(t, name, got[j], want[i].Band[j], 1e-12)
		}
		_, high := designs[i].Support()
		grid := SpendGrid(2*high[i%4], GridPoints)
		checkRel(t, "grid top / 2", grid[GridPoints-1]/2, want[i].Max4, 1e-12)
	}
}

// The response bands on a spend grid from 0 to twice the top of the
// observed range: R(0) = 0 in every draw (README.md, "Horizon response":
// minus the same with w = 0), and the median response does not fall as
// spend rises (β ≥ 0 and saturation increasing, README.md "Model").
func TestResponseBands(t *testing.T) {
	w := testWorld(t, 114)
	full, err := w.d.Fit(w.sim.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	d := runOrFatal(t, &Bootstrap{Design: w.d, Y: w.sim.Panel.KPI, Draws: 20, Seed: 2, Full: full, Workers: 2})
	rb := ResponseBands(w.d, d.Params(), 13)
	if len(rb) != 4 {
		t.Fatalf("%d channels", len(rb))
	}
	for k, c := range rb {
		if len(c.Points) != GridPoints || c.Name != w.d.Spec.Channels[k].Name {
			t.Fatalf("%s: %d points", c.Name, len(c.Points))
		}
		_, high := w.d.Support()
		top := 2 * high[k]
		if c.Points[0].Spend != 0 || c.Points[GridPoints-1].Spend != top {
			t.Errorf("%s: grid %g..%g, want 0..%g", c.Name, c.Points[0].Spend, c.Points[GridPoints-1].Spend, top)
		}
		// Zero up to round-off: model.Curve subtracts two sums of the same
		// saturation values computed by different routines.
		z, scale := c.Points[0].Band, c.Points[GridPoints-1].Median
		for _, v := range []float64{z.Median, z.P05, z.P10, z.P90, z.P95} {
			if math.Abs(v) > 1e-12*scale {
				t.Errorf("%s: response at zero spend %+v (scale %g)", c.Name, z, scale)
			}
		}
		for i := 1; i < len(c.Points); i++ {
			p, q := c.Points[i-1], c.Points[i]
			if q.Median < p.Median || !(q.P05 <= q.P10 && q.P10 <= q.Median && q.Median <= q.P90 && q.P90 <= q.P95) {
				t.Errorf("%s at %g: band %+v after %+v", c.Name, q.Spend, q.Band, p.Band)
			}
		}
	}
}

func runOrFatal(t *testing.T, b *Bootstrap) *Draws {
	t.Helper()
	_, d := runBytes(t, b)
	if len(d.Params()) == 0 {
		t.Fatal("no successful replicates")
	}
	return d
}
