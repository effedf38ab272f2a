package optimize

import "math"

// Status says why a solve stopped.
type Status int

const (
	// Converged: the quasi-Newton step fell below the step tolerance, or the
	// predicted improvement below what rounding of the objective allows.
	Converged Status = iota + 1
	// IterationLimit: Settings.MaxIterations steps were taken.
	IterationLimit
	// Stalled: the line search found no better point along the step; the
	// KKT check says whether the point is optimal nonetheless.
	Stalled
	// Fixed: the bounds leave no channel room to move.
	Fixed
)

func (s Status) String() string {
	switch s {
	case Converged:
		return "converged"
	case IterationLimit:
		return "iteration limit"
	case Stalled:
		return "stalled"
	case Fixed:
		return "fixed by the bounds"
	}
	return "not run"
}

// local is one solve from one start: a sequential quadratic programming
// method for linear constraints (Nocedal & Wright 2006, "Numerical
// Optimization", ch. 18). Each step minimizes the quadratic model
// gᵀd + ½dᵀBd over the whole feasible polyhedron exactly (qp.solve), so
// every iterate meets the budget, the boxes and the group shares; B is the
// damped BFGS approximation of the Hessian (Powell 1978; Nocedal & Wright
// Procedure 18.2), positive definite even where S-shaped curves make the
// objective convex; an Armijo line search on the feasible segment gives
// descent. The variables are feasible.y and the objective is minimized as
// −objective/phi, both of order one.
type local struct {
	f       *feasible
	ev      *evaluator
	obj     Objective
	h       float64 // smoothing width of risk objectives
	phi     float64 // objective scale (the total budget)
	maxIter int
	xtol    float64

	w, gw []float64 // full plan and gradient scratch
}

type localResult struct {
	y      []float64
	value  float64   // the (smoothed) objective, maximized
	B      []float64 // final quasi-Newton matrix
	status Status
	iters  int
}

func newLocal(f *feasible, ev *evaluator, obj Objective, h, phi float64, maxIter int, xtol float64) *local {
	n := len(f.pos)
	return &local{f: f, ev: ev, obj: obj, h: h, phi: phi, maxIter: maxIter, xtol: xtol,
		w: make([]float64, n), gw: make([]float64, n)}
}

// eval returns the scaled objective −objective/phi at y and its gradient.
func (ls *local) eval(y, g []float64) float64 {
	w := ls.f.toW(ls.w, y)
	ls.ev.run(w)
	o := ls.ev.objective(ls.obj, ls.h, ls.gw)
	for i, k := range ls.f.free {
		g[i] = -ls.gw[k] * ls.f.sigma / ls.phi
	}
	return -o / ls.phi
}

// solve runs from the feasible point y0; B0 (may be nil) seeds the
// quasi-Newton matrix.
func (ls *local) solve(y0, B0 []float64) localResult {
	m := len(y0)
	y := append([]float64(nil), y0...)
	g := make([]float64, m)
	F := ls.eval(y, g)
	B := make([]float64, m*m)
	fresh := B0 == nil
	identity := func() {
		clear(B)
		gamma := 10 * maxAbs(g) // first step moves about a tenth of sigma
		if !(gamma > 0) {
			gamma = 1
		}
		for i := range m {
			B[i*m+i] = gamma
		}
	}
	if fresh {
		identity()
	} else {
		copy(B, B0)
	}
	yt := make([]float64, m)
	gt := make([]float64, m)
	a := make([]float64, m)
	d := make([]float64, m)
	s := make([]float64, m)
	yv := make([]float64, m)
	Bs := make([]float64, m)
	res := localResult{status: IterationLimit}
	resets := 0
	atY := true // the evaluator holds the values at y
	for it := 0; it < ls.maxIter; it++ {
		res.iters = it + 1
		for i := range m {
			a[i] = g[i] - dot(B[i*m:(i+1)*m], y)
		}
		p := qp{n: m, G: B, a: a, rows: ls.f.rows, neq: ls.f.neq}
		z, conflict, err := p.solve(nil)
		if err != nil || conflict != nil {
			// Only rounding in an ill-conditioned B gets here: restart it.
			if resets++; resets > 3 {
				res.status = Stalled
				break
			}
			identity()
			fresh = true
			continue
		}
		ls.f.clean(z)
		for i := range m {
			d[i] = z[i] - y[i]
		}
		slope := dot(g, d)
		noise := 1e-15 * max(1, math.Abs(F))
		if maxAbs(d) <= ls.xtol || -slope <= noise {
			res.status = Converged
			break
		}
		if slope >= 0 {
			if resets++; resets > 3 {
				res.status = Stalled
				break
			}
			identity()
			fresh = true
			continue
		}
		alpha, Ft, ok := 1.0, 0.0, false
		for range 40 {
			for i := range m {
				yt[i] = y[i] + alpha*d[i]
			}
			Ft = ls.eval(yt, gt)
			atY = false
			if Ft <= F+1e-4*alpha*slope {
				ok = true
				break
			}
			// Minimizer of the quadratic through F, slope and Ft, kept in
			// [alpha/10, alpha/2].
			q := -slope * alpha * alpha / (2 * (Ft - F - slope*alpha))
			if !(q > 0) || math.IsInf(Ft, 0) || math.IsNaN(Ft) {
				q = alpha / 2
			}
			alpha = min(max(q, alpha/10), alpha/2)
		}
		if !ok {
			res.status = Stalled
			break
		}
		for i := range m {
			s[i] = yt[i] - y[i]
			yv[i] = gt[i] - g[i]
		}
		sy := dot(s, yv)
		if fresh && sy > 0 {
			// Scale the first matrix to the curvature seen (Nocedal & Wright eq. 6.20).
			gamma := dot(yv, yv) / sy
			clear(B)
			for i := range m {
				B[i*m+i] = gamma
			}
		}
		fresh = false
		bfgsDamped(B, m, s, yv, Bs)
		improved := F - Ft
		atY = true
		copy(y, yt)
		copy(g, gt)
		F = Ft
		if improved <= noise && maxAbs(s) <= math.Sqrt(ls.xtol) {
			res.status = Converged
			break
		}
	}
	if !atY {
		// The last evaluation was a rejected trial: the caller reads the
		// evaluator at the returned point.
		F = ls.eval(y, g)
	}
	res.y, res.value, res.B = y, -F*ls.phi, B
	return res
}

// bfgsDamped applies Powell's damped BFGS update to B with step s and
// gradient change yv: when sᵀy < 0.2·sᵀBs the change is blended with Bs so
// that B stays positive definite (Nocedal & Wright Procedure 18.2).
func bfgsDamped(B []float64, m int, s, yv, Bs []float64) {
	for i := range m {
		Bs[i] = dot(B[i*m:(i+1)*m], s)
	}
	sBs := dot(s, Bs)
	if !(sBs > 0) {
		return
	}
	sy := dot(s, yv)
	theta := 1.0
	if sy < 0.2*sBs {
		theta = 0.8 * sBs / (sBs - sy)
	}
	r := make([]float64, m)
	for i := range m {
		r[i] = theta*yv[i] + (1-theta)*Bs[i]
	}
	sr := dot(s, r)
	if !(sr > 0) {
		return
	}
	for i := range m {
		for j := range m {
			B[i*m+j] += -Bs[i]*Bs[j]/sBs + r[i]*r[j]/sr
		}
	}
}

func maxAbs(x []float64) float64 {
	var m float64
	for _, v := range x {
		m = max(m, math.Abs(v))
	}
	return m
}
