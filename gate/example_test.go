package gate_test

import (
	"fmt"
	"math"

	"sluice/gate"
	"sluice/optimize"
	"sluice/policies"
)

// lines is R_dk(w) = slope[d][k]·w: every draw says video earns more than
// search per unit, so moving money into video gains in every draw.
type lines [][]float64

func (l lines) NumDraws() int    { return len(l) }
func (l lines) NumChannels() int { return len(l[0]) }
func (l lines) Eval(d, k int, w float64) (float64, float64) {
	return l[d][k] * w, l[d][k]
}

// The support guard holds video at 1.2 × its highest 4-week average seen
// (6,000/week), so only 2,200 of the 3,000/week proposed moves, and search is
// cut by the same 2,200 to keep the budget.
func ExampleRun() {
	pol, err := policies.Preset("standard")
	if err != nil {
		panic(err)
	}
	d, err := gate.Run(gate.Review{
		Channels:  []string{"search", "video"},
		Current:   []float64{10000, 5000},
		Proposed:  []float64{7000, 8000},
		Response:  lines{{13, 20}, {14, 21}, {12, 19}, {13, 22}},
		Economics: optimize.Economics{Horizon: 13, Margin: 1, ValuePerKPI: 1},
		Support:   []gate.SupportRange{{Low: 7000, High: 12000}, {Low: 3000, High: 6000}},
		Policy:    pol,
	}, gate.Settings{})
	if err != nil {
		panic(err)
	}
	fmt.Println(d.Verdict, math.Round(d.ApprovedPlan[0]), math.Round(d.ApprovedPlan[1]))
	fmt.Println(d.Moves[1].Reasons[0])
	// Output:
	// downsize 7800 7200
	// the proposed 8,000/week for video is beyond what the data supports: the policy trusts up to 1.2 × its highest 4-week average seen (6,000/week), that is 7,200/week
}
