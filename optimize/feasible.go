package optimize

import (
	"math"
	"slices"
)

type rowKind uint8

const (
	rowBudget rowKind = iota
	rowLower
	rowUpper
	rowGroupMin
	rowGroupMax
)

// row is one linear constraint a·y = b or a·y ≥ b over the free channels.
type row struct {
	kind  rowKind
	index int // free-channel index for bounds, group index for shares
	a     []float64
	b     float64
	scale float64 // size of the terms b was computed from, for rounding tolerances
}

// feasible is the feasible set of Constraints in the coordinates the solver
// works in: channels whose box has no width are fixed and dropped, and the
// free ones are scaled, y_i = w_k / sigma with sigma the mean weekly spend
// per free channel, so that every quantity is of order one.
type feasible struct {
	c            *Constraints
	lower, upper []float64 // the box of every channel
	free         []int     // free channel of each coordinate
	pos          []int     // coordinate of each channel, -1 when fixed
	fixed        []float64 // spend of fixed channels, 0 for free ones
	fixedSum     float64
	sigma        float64
	target       float64 // (S − fixed spend)/sigma: the budget row's right-hand side
	rows         []row   // equality rows first
	neq          int
	groupRows    bool  // some row is a group share
	conflict     []int // rows without free channels that cannot hold
}

func newFeasible(c *Constraints) *feasible {
	f := &feasible{c: c}
	f.lower, f.upper = c.Box()
	n := len(c.Channels)
	tol := c.tol()
	f.pos = make([]int, n)
	f.fixed = make([]float64, n)
	for k := range n {
		if f.upper[k]-f.lower[k] <= tol {
			f.pos[k] = -1
			f.fixed[k] = f.lower[k]
			f.fixedSum += f.lower[k]
			continue
		}
		f.pos[k] = len(f.free)
		f.free = append(f.free, k)
	}
	m := len(f.free)
	S := c.Weekly()
	f.sigma = 1
	if rest := S - f.fixedSum; m > 0 && rest > 0 {
		f.sigma = rest / float64(m)
	} else if m > 0 {
		var s float64
		for _, k := range f.free {
			s += c.Channels[k].Current
		}
		if s > 0 {
			f.sigma = s / float64(m)
		}
	}
	f.target = (S - f.fixedSum) / f.sigma
	add := func(r row, eq bool) {
		zero := true
		for _, v := range r.a {
			if v != 0 {
				zero = false
			}
		}
		if zero {
			// Only fixed channels are involved: the row holds or it does not.
			if t := tol/f.sigma + 1e-12*r.scale; r.b > t || (eq && r.b < -t) {
				f.rows = append(f.rows, r)
				f.conflict = append(f.conflict, len(f.rows)-1)
			}
			return
		}
		f.rows = append(f.rows, r)
		if eq {
			f.neq++
		}
	}
	ones := func(scale float64) []float64 {
		a := make([]float64, m)
		for i := range a {
			a[i] = scale
		}
		return a
	}
	if c.AtMost {
		add(row{kind: rowBudget, a: ones(-1), b: -f.target, scale: (S + f.fixedSum) / f.sigma}, false)
	} else {
		add(row{kind: rowBudget, a: ones(1), b: f.target, scale: (S + f.fixedSum) / f.sigma}, true)
	}
	for i, k := range f.free {
		a := make([]float64, m)
		a[i] = 1
		f.rows = append(f.rows, row{kind: rowLower, index: i, a: a, b: f.lower[k] / f.sigma})
		if !math.IsInf(f.upper[k], 1) {
			a := make([]float64, m)
			a[i] = -1
			f.rows = append(f.rows, row{kind: rowUpper, index: i, a: a, b: -f.upper[k] / f.sigma})
		}
	}
	for gi, g := range c.Groups {
		member := make([]bool, n)
		var fixedIn float64
		for _, k := range g.Members {
			if !member[k] {
				member[k] = true
				fixedIn += f.fixed[k]
			}
		}
		// Σ_{k∈g} w_k − L·Σ_k w_k ≥ 0, split into free and fixed parts.
		if g.MinShare > 0 {
			a := make([]float64, m)
			for i, k := range f.free {
				a[i] = -g.MinShare
				if member[k] {
					a[i] += 1
				}
			}
			f.groupRows = true
			add(row{kind: rowGroupMin, index: gi, a: a, b: (g.MinShare*f.fixedSum - fixedIn) / f.sigma,
				scale: (g.MinShare*f.fixedSum + fixedIn) / f.sigma}, false)
		}
		if g.MaxShare < 1 {
			a := make([]float64, m)
			for i, k := range f.free {
				a[i] = g.MaxShare
				if member[k] {
					a[i] -= 1
				}
			}
			f.groupRows = true
			add(row{kind: rowGroupMax, index: gi, a: a, b: (fixedIn - g.MaxShare*f.fixedSum) / f.sigma,
				scale: (g.MaxShare*f.fixedSum + fixedIn) / f.sigma}, false)
		}
	}
	return f
}

// toW writes the full plan of coordinates y into dst.
func (f *feasible) toW(dst, y []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(f.pos))
	}
	for k, i := range f.pos {
		if i < 0 {
			dst[k] = f.fixed[k]
		} else {
			dst[k] = f.sigma * y[i]
		}
	}
	return dst
}

// toY writes the coordinates of plan w into dst.
func (f *feasible) toY(dst, w []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(f.free))
	}
	for i, k := range f.free {
		dst[i] = w[k] / f.sigma
	}
	return dst
}

// project writes into dst the Euclidean projection of y onto the feasible
// set: by the breakpoint bisection when only the budget and the boxes
// constrain, by the active-set method when groups do too.
func (f *feasible) project(dst, y []float64) ([]float64, []int, error) {
	if f.conflict != nil {
		return nil, f.conflict, nil
	}
	m := len(f.free)
	if dst == nil {
		dst = make([]float64, m)
	}
	if !f.groupRows {
		lo := make([]float64, m)
		hi := make([]float64, m)
		for i, k := range f.free {
			lo[i], hi[i] = f.lower[k]/f.sigma, f.upper[k]/f.sigma
		}
		if _, ok := projectBudgetBox(dst, y, lo, hi, f.target, f.c.AtMost); ok {
			return dst, nil, nil
		}
		// An empty budget-and-box set: let the active-set method name it.
	}
	G := make([]float64, m*m)
	a := make([]float64, m)
	for i := range m {
		G[i*m+i] = 1
		a[i] = -y[i]
	}
	p := qp{n: m, G: G, a: a, rows: f.rows, neq: f.neq}
	z, conflict, err := p.solve(dst)
	if err != nil || conflict != nil {
		return nil, conflict, err
	}
	f.clean(z)
	return z, nil, nil
}

// clean clamps y into the boxes, where rounding may have left it a hair
// outside.
func (f *feasible) clean(y []float64) {
	for i, k := range f.free {
		y[i] = min(max(y[i], f.lower[k]/f.sigma), f.upper[k]/f.sigma)
	}
}

// ProjectBudgetBox writes into dst the Euclidean projection of x onto the
// budget and the boxes alone,
//
//	argmin_w ||w − x||²  s.t.  Σ_k w_k = s (≤ s when atMost),  lo ≤ w ≤ hi,
//
// and returns it with the multiplier μ of the budget row. The solution is
// w_k(μ) = clamp(x_k − μ, lo_k, hi_k) with Σ_k w_k(μ) = s (Held, Wolfe &
// Crowder 1974, "Validation of subgradient optimization", Math.
// Programming 6; Brucker 1984): Σ_k w_k(μ) is piecewise linear and
// non-increasing in μ, so bisection over its sorted breakpoints finds the
// piece holding the root, and on that piece μ solves a linear equation
// exactly — the budget then holds to rounding (relative 1e-15), well inside
// the 1e-12 asked for. ok is false when no w meets the constraints. hi may
// hold +Inf.
func ProjectBudgetBox(dst, x, lo, hi []float64, s float64, atMost bool) (w []float64, mu float64, ok bool) {
	if len(lo) != len(x) || len(hi) != len(x) {
		panic("optimize: ProjectBudgetBox bounds and point differ in length")
	}
	if dst == nil {
		dst = make([]float64, len(x))
	}
	mu, ok = projectBudgetBox(dst, x, lo, hi, s, atMost)
	return dst, mu, ok
}

func projectBudgetBox(dst, x, lo, hi []float64, s float64, atMost bool) (float64, bool) {
	n := len(x)
	if n == 0 {
		return 0, atMost && s >= 0 || math.Abs(s) <= 1e-12
	}
	var sumLo, sumHi float64
	for i := range n {
		if lo[i] > hi[i] {
			return 0, false
		}
		sumLo += lo[i]
		sumHi += hi[i]
	}
	scale := math.Abs(s) + 1
	if sumLo > s+1e-12*scale || (!atMost && sumHi < s-1e-12*scale) {
		return 0, false
	}
	total := func(mu float64) float64 {
		var t float64
		for i := range n {
			t += min(max(x[i]-mu, lo[i]), hi[i])
		}
		return t
	}
	if atMost && total(0) <= s {
		for i := range n {
			dst[i] = min(max(x[i], lo[i]), hi[i])
		}
		return 0, true
	}
	// Breakpoints x_i − hi_i (channel i leaves its upper bound) and x_i − lo_i
	// (it reaches its lower bound); total is linear between neighbours.
	bp := make([]float64, 0, 2*n)
	for i := range n {
		if !math.IsInf(hi[i], 1) {
			bp = append(bp, x[i]-hi[i])
		}
		bp = append(bp, x[i]-lo[i])
	}
	slices.Sort(bp)
	// Find the last breakpoint with total >= s; total(bp[j]) is non-increasing.
	a, b := 0, len(bp)-1
	if total(bp[0]) < s { // only when some hi is +Inf: the root lies left of every breakpoint
		a, b = -1, -1
	} else {
		for a < b {
			mid := (a + b + 1) / 2
			if total(bp[mid]) >= s {
				a = mid
			} else {
				b = mid - 1
			}
		}
	}
	// On the piece to the right of bp[a] the active set is fixed: solve exactly.
	probe := math.Inf(-1)
	if a >= 0 {
		probe = bp[a]
	}
	next := math.Inf(1)
	if a+1 < len(bp) {
		next = bp[a+1]
	}
	mid := probe + 1
	switch {
	case math.IsInf(probe, -1) && math.IsInf(next, 1):
		mid = 0
	case math.IsInf(probe, -1):
		mid = next - 1
	case !math.IsInf(next, 1):
		mid = probe + (next-probe)/2
	}
	var clamped, freeSum float64
	nFree := 0
	for i := range n {
		v := x[i] - mid
		switch {
		case v <= lo[i]:
			clamped += lo[i]
		case v >= hi[i]:
			clamped += hi[i]
		default:
			freeSum += x[i]
			nFree++
		}
	}
	mu := probe
	if nFree > 0 {
		mu = (freeSum + clamped - s) / float64(nFree)
	}
	for i := range n {
		dst[i] = min(max(x[i]-mu, lo[i]), hi[i])
	}
	return mu, true
}
