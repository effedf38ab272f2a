package optimize_test

import (
	"fmt"
	"math"

	"sluice/optimize"
)

// twoCurves is a Response with one draw of two exponential curves,
// R_k(w) = β_k·(1 − e^{−w/K_k}).
type twoCurves struct{ beta, K [2]float64 }

func (c twoCurves) NumDraws() int    { return 1 }
func (c twoCurves) NumChannels() int { return 2 }
func (c twoCurves) Eval(d, k int, w float64) (float64, float64) {
	e := math.Exp(-w / c.K[k])
	return c.beta[k] * (1 - e), c.beta[k] / c.K[k] * e
}

func Example() {
	plan, err := optimize.ParsePlan([]byte(`
budget_change: 0.0
channels:
  search: {max_change: 0.5}
  tv:     {min: 10000}
`), "plan.yaml")
	if err != nil {
		fmt.Println(err)
		return
	}
	// The model's channels and their mean weekly spend of the last 13 weeks.
	prob, err := plan.Resolve([]string{"search", "tv"}, []float64{20000, 20000})
	if err != nil {
		fmt.Println(err)
		return
	}
	prob.Response = twoCurves{beta: [2]float64{900e3, 500e3}, K: [2]float64{30e3, 20e3}}
	res, err := optimize.Solve(*prob, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, c := range res.Channels {
		fmt.Printf("%-6s %6.0f -> %6.0f  mROI %.3f -> %.3f\n", c.Name, c.Current, c.Proposed, c.MROICurrent, c.MROIProposed)
	}
	fmt.Printf("gain %.0f over 13 weeks; KKT ok: %v\n", res.ExpectedGain, res.KKT.OK)
	// By hand (water-filling, see closedform_test.go): ln ν = (30e3·ln 30 +
	// 20e3·ln 25 − 40e3)/50e3 = 2.5283, w = K·(ln(β/K) − ln ν) = 26,188 and
	// 13,812, both returning ν/13 = 0.964; the gain is
	// Σ β·(e^{−c/K} − e^{−w/K}) = 86,126 − 66,700.

	// Output:
	// search  20000 ->  26188  mROI 1.185 -> 0.964
	// tv      20000 ->  13812  mROI 0.707 -> 0.964
	// gain 19426 over 13 weeks; KKT ok: true
}
