package optimize

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"testing"
)

// benchProblem is a 12-channel plan over 1000 draws of the carryover
// response, with boxes, a lock, max_change and a group.
func benchProblem(draws int, obj Objective) Problem {
	rng := rand.New(rand.NewPCG(7, 12))
	const n = 12
	resp := newCarryover(rng, draws, n, 20000)
	ch := make([]Limits, n)
	var total float64
	for k := range ch {
		cur := 10000 + 20000*rng.Float64()
		total += cur
		ch[k] = Limits{Name: fmt.Sprintf("ch%02d", k), Current: cur, Max: inf, MaxChange: inf}
	}
	ch[0].MaxChange = 0.5
	ch[1].Min, ch[1].Max = 5000, 40000
	ch[2].Locked = true
	return Problem{
		Response:  resp,
		Economics: Economics{Horizon: 13, Margin: 1, ValuePerKPI: 1},
		Constraints: Constraints{Horizon: 13, Budget: 13 * total * 1.05, Channels: ch,
			Groups: []Group{{Name: "brand", Members: []int{3, 4, 5}, MinShare: 0.2, MaxShare: 0.5}}},
		Objective: obj,
	}
}

func benchSolve(b *testing.B, obj Objective) {
	p := benchProblem(1000, obj)
	var r *Result
	for b.Loop() {
		var err error
		if r, err = Solve(p, nil); err != nil {
			b.Fatal(err)
		}
	}
	// The work in evaluations of a plan over all 1000 draws: with the
	// machine shared, this and BenchmarkEvaluate's time per evaluation say
	// more than the wall time.
	b.ReportMetric(float64(r.DrawEvaluations)/1000, "full-evals/op")
}

// BenchmarkSolveExpected: 1000 draws × 12 channels, the expected objective
// (target: under 1 s on one core).
func BenchmarkSolveExpected(b *testing.B) { benchSolve(b, Objective{Kind: Expected}) }

// BenchmarkSolveCVaR: 1000 draws × 12 channels, cvar:0.05:0.5 (target:
// under 3 s).
func BenchmarkSolveCVaR(b *testing.B) { benchSolve(b, Objective{Kind: CVaR, Level: 0.05, Weight: 0.5}) }

// BenchmarkEvaluate is one evaluation of a plan's value and gradient over
// 1000 draws × 12 channels (312,000 pow calls), the solver's unit of work.
func BenchmarkEvaluate(b *testing.B) {
	p := benchProblem(1000, Objective{})
	all := make([]int, 1000)
	for d := range all {
		all[d] = d
	}
	ev := newEvaluator(p.Response, p.Economics, all, runtime.GOMAXPROCS(0), false)
	w := make([]float64, 12)
	for k, ch := range p.Constraints.Channels {
		w[k] = ch.Current
	}
	for b.Loop() {
		ev.run(w)
	}
}
