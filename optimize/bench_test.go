package optimize

import (
	"fmt"
	"math/rand/v2"
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

func BenchmarkSolveExpected(b *testing.B) {
	p := benchProblem(1000, Objective{Kind: Expected})
	for b.Loop() {
		if _, err := Solve(p, nil); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSolveCVaR(b *testing.B) {
	p := benchProblem(1000, Objective{Kind: CVaR, Level: 0.05, Weight: 0.5})
	for b.Loop() {
		if _, err := Solve(p, nil); err != nil {
			b.Fatal(err)
		}
	}
}
