package optimize

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"sluice/internal/refcheck"
)

type slsqpProblem struct {
	Name         string         `json:"name"`
	Hill         []bool         `json:"hill"`
	Beta         [][]float64    `json:"beta"`
	K            [][]float64    `json:"K"`
	S            [][]float64    `json:"S"`
	Margin       float64        `json:"margin"`
	ValuePerKPI  float64        `json:"value_per_kpi"`
	Horizon      int            `json:"horizon"`
	Weekly       float64        `json:"weekly"`
	Lower        []float64      `json:"lower"`
	Upper        []*float64     `json:"upper"`
	Current      []float64      `json:"current"`
	Groups       []slsqpGroup   `json:"groups"`
	Objective    map[string]any `json:"objective"`
	Seed         int            `json:"seed"`
	RandomStarts int            `json:"random_starts"`
	Sluice       []float64      `json:"sluice"` // sluice's optimum, for SLSQP to start from
}

type slsqpGroup struct {
	Members  []int   `json:"members"`
	MinShare float64 `json:"min_share"`
	MaxShare float64 `json:"max_share"`
}

type slsqpRun struct {
	Value   float64 `json:"value"`
	Success bool    `json:"success"`
	Message string  `json:"message"`
}

type slsqpAnswer struct {
	Name   string     `json:"name"`
	Value  *float64   `json:"value"`
	X      []float64  `json:"x"`
	Runs   []slsqpRun `json:"runs"`
	Polish *slsqpRun  `json:"polish"`
}

// slsqpCase builds a problem of n channels (hill[k] says which are Hill
// curves, S-shaped up to sMax) over D draws with some boxes and groups.
func slsqpCase(name string, seed uint64, D int, hill []bool, sMax float64, groups []Group, obj Objective) (Problem, slsqpProblem) {
	rng := rand.New(rand.NewPCG(seed, 99))
	const scale = 20000.0
	resp := randomCurves(rng, D, hill, scale, sMax)
	n := len(hill)
	lim := make([]Limits, n)
	var total float64
	for k := range n {
		lim[k] = Limits{Name: fmt.Sprint("ch", k), Current: scale * (0.5 + rng.Float64()), Max: math.Inf(1), MaxChange: math.Inf(1)}
		switch k % 4 {
		case 1:
			lim[k].MaxChange = 0.6
		case 2:
			lim[k].Min, lim[k].Max = 0.3*scale, 2*scale
		}
		total += lim[k].Current
	}
	p := Problem{Response: resp, Economics: Economics{Horizon: 13, Margin: 0.9, ValuePerKPI: 1.1},
		Constraints: Constraints{Horizon: 13, Budget: 13 * 1.08 * total, Channels: lim, Groups: groups}, Objective: obj}
	l, u := p.Constraints.Box()
	sp := slsqpProblem{Name: name, Hill: hill, Beta: resp.beta, K: resp.K, S: resp.S, Margin: 0.9, ValuePerKPI: 1.1,
		Horizon: 13, Weekly: p.Constraints.Weekly(), Lower: l, Current: make([]float64, n), Seed: int(seed), RandomStarts: 8}
	for k := range n {
		sp.Current[k] = lim[k].Current
		if !math.IsInf(u[k], 1) {
			sp.Upper = append(sp.Upper, &u[k])
		} else {
			sp.Upper = append(sp.Upper, nil)
		}
	}
	for _, g := range groups {
		sp.Groups = append(sp.Groups, slsqpGroup{Members: g.Members, MinShare: g.MinShare, MaxShare: g.MaxShare})
	}
	sp.Objective = map[string]any{"kind": "expected"}
	if obj.Kind == CVaR {
		sp.Objective = map[string]any{"kind": "cvar", "alpha": obj.Level, "weight": obj.Weight}
	}
	return p, sp
}

// exactAt is the exact objective of p at plan w.
func exactAt(p Problem, w []float64) float64 {
	all := make([]int, p.Response.NumDraws())
	for d := range all {
		all[d] = d
	}
	ev := newEvaluator(p.Response, p.Economics, all, 1, false)
	cur := make([]float64, len(w))
	for k, ch := range p.Constraints.Channels {
		cur[k] = ch.Current
	}
	ev.run(cur)
	base := append([]float64(nil), ev.vals...)
	ev.run(w)
	return p.Objective.exact(ev.vals, base)
}

// TestAgainstSLSQP solves the same problems with SciPy's SLSQP (Kraft 1988,
// scipy.optimize.minimize(method="SLSQP"), SciPy 1.10.1 from Debian), run
// live from several starts, and asks sluice's optimum to be at least as
// good within 1e-6 relative. SLSQP also starts from sluice's optimum and
// must not improve on it by more than that: an independent check that it is
// a local optimum.
func TestAgainstSLSQP(t *testing.T) {
	if testing.Short() {
		t.Skip("runs SciPy")
	}
	hill := func(n int, every int) []bool {
		h := make([]bool, n)
		for k := range h {
			h[k] = every > 0 && k%every == 0
		}
		return h
	}
	type tc struct {
		p  Problem
		sp slsqpProblem
	}
	var cases []tc
	add := func(name string, seed uint64, D int, h []bool, sMax float64, g []Group, o Objective) {
		p, sp := slsqpCase(name, seed, D, h, sMax, g, o)
		cases = append(cases, tc{p, sp})
	}
	add("exponential, 4 channels", 1, 30, hill(4, 0), 1, nil, Objective{})
	add("Hill s up to 3.5, 3 channels", 2, 30, hill(3, 1), 3.5, nil, Objective{})
	add("Hill s up to 3, 12 channels", 3, 40, hill(12, 1), 3, nil, Objective{})
	add("mixed, 12 channels, groups", 4, 50, hill(12, 2), 3, []Group{
		{Name: "brand", Members: []int{0, 1, 2, 3}, MinShare: 0.35, MaxShare: 0.6},
		{Name: "social", Members: []int{7, 8}, MinShare: 0, MaxShare: 0.1}}, Objective{})
	add("cvar, 5 channels", 5, 40, hill(5, 2), 2.5, nil, Objective{Kind: CVaR, Level: 0.25, Weight: 0.5})
	var in []slsqpProblem
	results := make([]*Result, len(cases))
	for i, c := range cases {
		r, err := Solve(c.p, nil)
		if err != nil {
			t.Fatalf("%s: %v", c.sp.Name, err)
		}
		results[i] = r
		c.sp.Sluice = r.Proposed
		in = append(in, c.sp)
	}
	stdin, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	out := refcheck.Python(t, []string{"scipy"}, "testdata/slsqp_check.py", stdin)
	var answers []slsqpAnswer
	if err := json.Unmarshal(out, &answers); err != nil {
		t.Fatalf("reading SciPy's answer: %v\n%s", err, out)
	}
	for i, c := range cases {
		a := answers[i]
		t.Run(c.sp.Name, func(t *testing.T) {
			if a.Value == nil {
				t.Fatalf("SLSQP succeeded from no start: %+v", a.Runs)
			}
			r := results[i]
			// SciPy's point is feasible and its value is our objective there.
			if v, what := c.p.Constraints.violation(a.X); v > 1e-6*c.sp.Weekly {
				t.Fatalf("SciPy's point violates %s by %g", what, v)
			}
			ref := exactAt(c.p, a.X)
			if math.Abs(ref-*a.Value) > 1e-7*math.Abs(ref) {
				t.Fatalf("objective at SciPy's point: sluice %v, SciPy %v", ref, *a.Value)
			}
			rel := (ref - r.Value) / math.Abs(ref)
			agreeing := 0
			for _, run := range a.Runs {
				if run.Success && math.Abs(run.Value-*a.Value) <= 1e-6*math.Abs(*a.Value) {
					agreeing++
				}
			}
			t.Logf("sluice %.10g, SLSQP %.10g (relative shortfall %.2g); SLSQP best reached by %d of %d starts, sluice's by %d of %d",
				r.Value, ref, rel, agreeing, len(a.Runs), r.Agreed, len(r.Starts))
			if rel > 1e-6 {
				t.Errorf("sluice's objective %.10g is worse than SLSQP's %.10g by %.2g relative", r.Value, ref, rel)
			}
			if pol := a.Polish; pol == nil || !pol.Success {
				t.Errorf("SLSQP from sluice's optimum: %+v", pol)
			} else if gain := (pol.Value - r.Value) / math.Abs(r.Value); gain > 1e-6 {
				t.Errorf("SLSQP improves sluice's optimum %.10g to %.10g (%.2g relative)", r.Value, pol.Value, gain)
			} else {
				t.Logf("SLSQP from sluice's optimum: %.10g (%.2g relative)", pol.Value, gain)
			}
			if !r.KKT.OK {
				t.Errorf("KKT: %+v", r.KKT)
			}
		})
	}
}
