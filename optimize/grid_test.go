package optimize

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestExhaustiveGrid solves a 3-channel S-shaped problem (Hill shapes 2 to
// 3, so every channel is convex below its inflection and the objective has
// several local optima) and checks the result against an exhaustive search
// of the budget simplex on a grid: exhaustive enumeration is the textbook
// global method for a low-dimensional nonconvex problem (common practice,
// no source). The allocator must be at least as good as the grid's best
// point and lie within one grid step of it.
func TestExhaustiveGrid(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 3))
	const D = 20
	c := &curves{hill: []bool{true, true, true}}
	for range D {
		c.beta = append(c.beta, []float64{
			2.0e6 * math.Exp(0.15*rng.NormFloat64()),
			1.6e6 * math.Exp(0.15*rng.NormFloat64()),
			3.4e6 * math.Exp(0.15*rng.NormFloat64())})
		c.K = append(c.K, []float64{
			30e3 * math.Exp(0.1*rng.NormFloat64()),
			20e3 * math.Exp(0.1*rng.NormFloat64()),
			45e3 * math.Exp(0.1*rng.NormFloat64())})
		c.S = append(c.S, []float64{3, 2.5, 2})
	}
	const H, weekly = 13, 70e3
	inf := math.Inf(1)
	p := Problem{Response: c, Economics: Economics{Horizon: H, Margin: 1, ValuePerKPI: 1},
		Constraints: Constraints{Horizon: H, Budget: H * weekly, Channels: []Limits{
			{Name: "a", Current: 45e3, Max: inf, MaxChange: inf},
			{Name: "b", Current: 20e3, Max: inf, MaxChange: inf},
			{Name: "c", Current: 5e3, Max: inf, MaxChange: inf}}}}

	const steps = 350
	step := weekly / steps
	value := func(w []float64) float64 {
		var v float64
		for d := range D {
			v += p.Economics.Value(c, d, w, nil)
		}
		return v / D
	}
	grid := make([][]float64, steps+1)
	bestV, bi, bj := math.Inf(-1), 0, 0
	for i := 0; i <= steps; i++ {
		grid[i] = make([]float64, steps+1-i)
		for j := 0; i+j <= steps; j++ {
			w := []float64{float64(i) * step, float64(j) * step, float64(steps-i-j) * step}
			grid[i][j] = value(w)
			if grid[i][j] > bestV {
				bestV, bi, bj = grid[i][j], i, j
			}
		}
	}
	// The problem must really be multimodal: count the grid points better
	// than every neighbour on the simplex.
	peaks := 0
	for i := range grid {
		for j := range grid[i] {
			peak := true
			for _, d := range [][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}, {1, -1}, {-1, 1}} {
				a, b := i+d[0], j+d[1]
				if a >= 0 && b >= 0 && a+b <= steps && grid[a][b] >= grid[i][j] {
					peak = false
				}
			}
			if peak {
				peaks++
			}
		}
	}
	if peaks < 2 {
		t.Fatalf("the grid has %d local maxima; the case needs several", peaks)
	}
	r, err := Solve(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	gw := []float64{float64(bi) * step, float64(bj) * step, float64(steps-bi-bj) * step}
	t.Logf("grid best %v at %v (%d local maxima); sluice %v at %v, %d of %d starts agree",
		bestV, gw, peaks, r.Value, r.Proposed, r.Agreed, len(r.Starts))
	// The status quo lies in the basin of a worse optimum (channel c
	// starved): only the other starts find the best.
	if r.Starts[0].Name != "status quo" || r.Starts[0].Agrees {
		t.Errorf("the status quo start should end at a worse optimum: %+v", r.Starts[0])
	}
	if r.Value < bestV-1e-9*math.Abs(bestV) {
		t.Errorf("sluice %v is worse than the grid's best %v", r.Value, bestV)
	}
	for k := range gw {
		if math.Abs(r.Proposed[k]-gw[k]) > step*(1+float64(k/2)) {
			t.Errorf("channel %d: sluice %v, grid %v: more than a grid step (%v) apart", k, r.Proposed[k], gw[k], step)
		}
	}
}
