package optimize

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize/convex/lp"
	"pgregory.net/rapid"
)

// genProblem draws a random plan: boxes, locks, max_change, overlapping
// groups and an equal or at-most budget, on a lattice (spend in hundreds,
// shares in twentieths) so that a plan is either feasible or clearly not.
func genProblem(t *rapid.T) Problem {
	n := rapid.IntRange(1, 7).Draw(t, "channels")
	lim := make([]Limits, n)
	var total float64
	for k := range lim {
		cur := 100 * float64(rapid.IntRange(0, 500).Draw(t, "current"))
		l := Limits{Name: fmt.Sprint("ch", k), Current: cur, Max: math.Inf(1), MaxChange: math.Inf(1)}
		if rapid.IntRange(0, 3).Draw(t, "has min") == 0 {
			l.Min = 100 * float64(rapid.IntRange(0, 400).Draw(t, "min"))
		}
		if rapid.IntRange(0, 3).Draw(t, "has max") == 0 {
			l.Max = l.Min + 100*float64(rapid.IntRange(0, 600).Draw(t, "max"))
		}
		if rapid.IntRange(0, 3).Draw(t, "has max_change") == 0 {
			l.MaxChange = 0.05 * float64(rapid.IntRange(0, 30).Draw(t, "max_change"))
		}
		l.Locked = rapid.IntRange(0, 6).Draw(t, "locked") == 0
		lim[k] = l
		total += cur
	}
	var groups []Group
	for g := range rapid.IntRange(0, 3).Draw(t, "groups") {
		var members []int
		for k := range n {
			if rapid.Bool().Draw(t, "member") {
				members = append(members, k)
			}
		}
		if len(members) == 0 {
			members = []int{rapid.IntRange(0, n-1).Draw(t, "member")}
		}
		lo := 0.05 * float64(rapid.IntRange(0, 14).Draw(t, "min_share"))
		hi := lo + 0.05*float64(rapid.IntRange(0, 20-int(math.Round(lo/0.05))).Draw(t, "max_share"))
		groups = append(groups, Group{Name: fmt.Sprint("g", g), Members: members, MinShare: lo, MaxShare: min(hi, 1)})
	}
	const H = 13
	budget := H * 100 * math.Round(total*(0.5+0.05*float64(rapid.IntRange(0, 20).Draw(t, "budget")))/100)
	if total == 0 {
		budget = H * 100 * float64(rapid.IntRange(0, 500).Draw(t, "budget"))
	}
	hill := make([]bool, n)
	for k := range hill {
		hill[k] = rapid.Bool().Draw(t, "hill")
	}
	rng := rand.New(rand.NewPCG(rapid.Uint64().Draw(t, "seed"), 1))
	obj := rapid.SampledFrom([]Objective{{Kind: Expected}, {Kind: Expected}, {Kind: Quantile, Level: 0.25}, {Kind: CVaR, Level: 0.25, Weight: 1}}).Draw(t, "objective")
	return Problem{
		Response:    randomCurves(rng, 4, hill, 20000, 3),
		Economics:   Economics{Horizon: H, Margin: 1, ValuePerKPI: 1},
		Constraints: Constraints{Horizon: H, Budget: budget, AtMost: rapid.Bool().Draw(t, "at_most"), Channels: lim, Groups: groups},
		Objective:   obj,
	}
}

// lpFeasible decides feasibility independently, with gonum's simplex
// method (gonum.org/v1/gonum/optimize/convex/lp): the constraints as written
// in the Constraints doc comment, the box recomputed from the Limits. Every
// row is loosened by a millionth of the weekly budget, far below the
// lattice genProblem draws from, so that a tight but feasible plan (a lock,
// a budget equal to the sum of the caps) does not leave the simplex method
// a degenerate vertex to stumble on.
func lpFeasible(c Constraints) (bool, error) {
	n := len(c.Channels)
	var G [][]float64
	var h []float64
	eps := 1e-6 * math.Max(c.Budget/float64(c.Horizon), 1)
	le := func(a []float64, b float64) { G = append(G, a); h = append(h, b+eps) }
	for k, ch := range c.Channels {
		lo, hi := math.Max(0, ch.Min), ch.Max
		if !math.IsInf(ch.MaxChange, 1) {
			lo = math.Max(lo, (1-ch.MaxChange)*ch.Current)
			hi = math.Min(hi, (1+ch.MaxChange)*ch.Current)
		}
		if ch.Locked {
			lo, hi = math.Max(lo, ch.Current), math.Min(hi, ch.Current)
		}
		a := make([]float64, n)
		a[k] = -1
		le(a, -lo)
		if !math.IsInf(hi, 1) {
			a := make([]float64, n)
			a[k] = 1
			le(a, hi)
		}
	}
	S := c.Budget / float64(c.Horizon)
	ones := make([]float64, n)
	for k := range ones {
		ones[k] = 1
	}
	le(ones, S)
	if !c.AtMost {
		neg := make([]float64, n)
		for k := range neg {
			neg[k] = -1
		}
		le(neg, -S)
	}
	for _, g := range c.Groups {
		in := make([]float64, n)
		for _, k := range g.Members {
			in[k] = 1
		}
		lo, hi := make([]float64, n), make([]float64, n)
		for k := range n {
			lo[k] = g.MinShare - in[k] // L·Σw − Σ_g w ≤ 0
			hi[k] = in[k] - g.MaxShare // Σ_g w − U·Σw ≤ 0
		}
		le(lo, 0)
		le(hi, 0)
	}
	dense := func(rows [][]float64) mat.Matrix {
		if len(rows) == 0 {
			return nil
		}
		m := mat.NewDense(len(rows), n, nil)
		for i, r := range rows {
			m.SetRow(i, r)
		}
		return m
	}
	cNew, aNew, bNew := lp.Convert(make([]float64, n), dense(G), h, nil, nil)
	_, _, err := lp.Simplex(cNew, aNew, bNew, 1e-10, nil)
	switch {
	case err == nil:
		return true, nil
	case errors.Is(err, lp.ErrInfeasible):
		return false, nil
	}
	return false, err
}

// violationOf measures the constraints independently of the package: the
// largest violation in weekly spend.
func violationOf(c Constraints, w []float64) float64 {
	var worst, total float64
	for k, ch := range c.Channels {
		lo, hi := math.Max(0, ch.Min), ch.Max
		if !math.IsInf(ch.MaxChange, 1) {
			lo = math.Max(lo, (1-ch.MaxChange)*ch.Current)
			hi = math.Min(hi, (1+ch.MaxChange)*ch.Current)
		}
		if ch.Locked {
			lo, hi = math.Max(lo, ch.Current), math.Min(hi, ch.Current)
		}
		worst = math.Max(worst, math.Max(lo-w[k], w[k]-hi))
		total += w[k]
	}
	S := c.Budget / float64(c.Horizon)
	if c.AtMost {
		worst = math.Max(worst, total-S)
	} else {
		worst = math.Max(worst, math.Abs(total-S))
	}
	for _, g := range c.Groups {
		var in float64
		for _, k := range g.Members {
			in += w[k]
		}
		worst = math.Max(worst, math.Max(g.MinShare*total-in, in-g.MaxShare*total))
	}
	return worst
}

// TestPropertyConstraints: whatever the plan, Solve either returns a plan
// that meets every constraint to 1e-9 of the weekly budget or reports
// ErrInfeasible — and it reports ErrInfeasible exactly when gonum's simplex
// finds the constraints infeasible.
func TestPropertyConstraints(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		p := genProblem(t)
		feasible, err := lpFeasible(p.Constraints)
		if err != nil {
			t.Skipf("the simplex reference failed: %v", err)
		}
		r, err := Solve(p, &Settings{RandomStarts: 1, Workers: 1})
		if err != nil {
			if !errors.Is(err, ErrInfeasible) {
				t.Fatalf("Solve: %v for %+v", err, p.Constraints)
			}
			if feasible {
				t.Fatalf("reported infeasible (%v) but the simplex finds a plan", err)
			}
			return
		}
		if !feasible {
			t.Fatalf("the simplex finds no plan, Solve returned %v for %+v", r.Proposed, p.Constraints)
		}
		scale := math.Max(p.Constraints.Budget/float64(p.Constraints.Horizon), 1)
		if v := violationOf(p.Constraints, r.Proposed); v > 1e-9*scale {
			t.Fatalf("plan %v violates a constraint by %g (%.2g of the weekly budget)", r.Proposed, v, v/scale)
		}
	})
}

// genFeasible draws a plan around a point w0 it is built to admit: every box
// holds w0, a lock sits at w0, max_change reaches w0 from the status quo,
// group shares bracket w0's, and the budget is w0's total (or above it when
// a ceiling).
func genFeasible(t *rapid.T) Problem {
	n := rapid.IntRange(1, 8).Draw(t, "channels")
	w0 := make([]float64, n)
	var total float64
	for k := range w0 {
		w0[k] = float64(rapid.IntRange(0, 50000).Draw(t, "w0"))
		total += w0[k]
	}
	lim := make([]Limits, n)
	for k := range lim {
		cur := float64(rapid.IntRange(0, 50000).Draw(t, "current"))
		l := Limits{Name: fmt.Sprint("ch", k), Current: cur, Max: math.Inf(1), MaxChange: math.Inf(1)}
		switch rapid.IntRange(0, 4).Draw(t, "kind") {
		case 1:
			l.Min = w0[k] * rapid.Float64Range(0, 1).Draw(t, "min")
			l.Max = w0[k] * rapid.Float64Range(1, 2).Draw(t, "max")
		case 2:
			if cur > 0 {
				l.MaxChange = math.Abs(w0[k]-cur)/cur + rapid.Float64Range(0, 0.5).Draw(t, "slack")
			}
		case 3:
			l.Current, l.Locked = w0[k], true
		}
		lim[k] = l
	}
	var groups []Group
	for g := range rapid.IntRange(0, 3).Draw(t, "groups") {
		var members []int
		var in float64
		for k := range n {
			if rapid.Bool().Draw(t, "member") {
				members = append(members, k)
				in += w0[k]
			}
		}
		sh := 0.0
		if total > 0 {
			sh = in / total
		}
		groups = append(groups, Group{Name: fmt.Sprint("g", g), Members: members,
			MinShare: sh * rapid.Float64Range(0, 1).Draw(t, "min_share"),
			MaxShare: sh + (1-sh)*rapid.Float64Range(0, 1).Draw(t, "max_share")})
	}
	const H = 13
	atMost := rapid.Bool().Draw(t, "at_most")
	budget := H * total
	if atMost {
		budget *= rapid.Float64Range(1, 1.5).Draw(t, "headroom")
	}
	hill := make([]bool, n)
	for k := range hill {
		hill[k] = rapid.Bool().Draw(t, "hill")
	}
	rng := rand.New(rand.NewPCG(rapid.Uint64().Draw(t, "seed"), 2))
	obj := rapid.SampledFrom([]Objective{{Kind: Expected}, {Kind: Quantile, Level: 0.25}, {Kind: CVaR, Level: 0.25, Weight: 1}}).Draw(t, "objective")
	return Problem{
		Response:    randomCurves(rng, 4, hill, 20000, 3),
		Economics:   Economics{Horizon: H, Margin: 1, ValuePerKPI: 1},
		Constraints: Constraints{Horizon: H, Budget: budget, AtMost: atMost, Channels: lim, Groups: groups},
		Objective:   obj,
	}
}

// TestPropertyFeasible: a plan built to be feasible is solved, never
// refused, and the proposal meets every constraint to 1e-9 of the weekly
// budget.
func TestPropertyFeasible(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		p := genFeasible(t)
		r, err := Solve(p, &Settings{RandomStarts: 1, Workers: 1})
		if err != nil {
			t.Fatalf("Solve: %v for %+v", err, p.Constraints)
		}
		scale := math.Max(p.Constraints.Budget/float64(p.Constraints.Horizon), 1)
		if v := violationOf(p.Constraints, r.Proposed); v > 1e-9*scale {
			t.Fatalf("plan %v violates a constraint by %g (%.2g of the weekly budget)", r.Proposed, v, v/scale)
		}
	})
}
