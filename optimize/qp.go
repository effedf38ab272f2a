package optimize

import (
	"errors"
	"math"
	"slices"

	"gonum.org/v1/gonum/floats"
)

// errQPStalled reports that the active-set method did not finish within its
// iteration bound, which only rounding can cause.
var errQPStalled = errors.New("optimize: quadratic subproblem did not converge")

// errQPInaccurate reports that rounding left the solution of a quadratic
// subproblem off its constraints.
var errQPInaccurate = errors.New("optimize: quadratic subproblem solved inaccurately")

// qp is a strictly convex quadratic program in n variables,
//
//	minimize ½ zᵀ G z + aᵀ z   s.t.  r.a · z = r.b  (the first neq rows)
//	                                 r.a · z ≥ r.b  (the others)
//
// with G symmetric positive definite (row-major).
type qp struct {
	n    int
	G, a []float64
	rows []row
	neq  int
}

// solve returns the minimizer, or the indices of rows that cannot hold
// together. It is the dual active-set method of Goldfarb & Idnani (1983), "A
// numerically stable dual method for solving strictly convex quadratic
// programs", Math. Programming 27: start from the unconstrained minimum, add
// the most violated constraint, and drop any active one whose multiplier
// would turn negative on the way. The method is finite, needs no feasible
// start, and when a violated row is a non-negative combination of active rows
// (the partial step is unbounded) those rows are a Farkas certificate of
// infeasibility. The small dense systems are solved afresh at every step
// (Gram–Schmidt twice on L⁻¹N) instead of updating factorizations: n is the
// number of channels.
func (p *qp) solve(dst []float64) (z []float64, conflict []int, err error) {
	n := p.n
	L, ok := cholesky(p.G, n)
	if !ok {
		return nil, nil, errors.New("optimize: quadratic model is not positive definite")
	}
	z = dst
	if z == nil {
		z = make([]float64, n)
	}
	for i := range n {
		z[i] = -p.a[i]
	}
	cholSolve(L, n, z)

	m := len(p.rows)
	norms := make([]float64, m)
	for i, r := range p.rows {
		norms[i] = math.Sqrt(dot(r.a, r.a))
	}
	sgn := make([]float64, m)
	for i := range sgn {
		sgn[i] = 1
	}
	added := make([]bool, m)
	var (
		act  []int       // active rows
		actN [][]float64 // L⁻¹ · (signed normal) of each active row
		u    []float64   // their multipliers
	)
	slack := func(i int) float64 { return sgn[i] * (dot(p.rows[i].a, z) - p.rows[i].b) }
	tolOf := func(i int) float64 {
		r := p.rows[i]
		var s float64
		for j, v := range r.a {
			s += math.Abs(v * z[j])
		}
		return 1e-13 * (1 + math.Abs(r.b) + r.scale + s)
	}
	dir := make([]float64, n)
	// skip holds violated rows found to be implied, to rounding, by the
	// active ones (see below); it is cleared whenever a row is added.
	skip := make([]bool, m)
	for iter := 0; ; iter++ {
		if iter > 20*(m+n+1) {
			return nil, nil, errQPStalled
		}
		// Equality rows first, oriented so that they start violated or tight.
		pk := -1
		for i := 0; i < p.neq; i++ {
			if !added[i] && !skip[i] {
				pk = i
				if dot(p.rows[i].a, z)-p.rows[i].b > 0 {
					sgn[i] = -1
				}
				break
			}
		}
		if pk < 0 {
			worst := 0.0
			for i := p.neq; i < m; i++ {
				if added[i] || skip[i] || norms[i] == 0 {
					continue
				}
				if s := slack(i); s < -tolOf(i) && s/norms[i] < worst {
					worst, pk = s/norms[i], i
				}
			}
		}
		if pk < 0 {
			// An ill-conditioned G (a quasi-Newton matrix gone astray) can
			// let rounding move z off the rows it keeps; refuse rather than
			// return such a point.
			for i, r := range p.rows {
				s := dot(r.a, z) - r.b
				if s < -1e3*tolOf(i) || (i < p.neq && s > 1e3*tolOf(i)) {
					return nil, nil, errQPInaccurate
				}
			}
			return z, nil, nil
		}
		np := make([]float64, n)
		for j, v := range p.rows[pk].a {
			np[j] = sgn[pk] * v
		}
		forward(L, n, np) // ñ_p = L⁻¹ n_p
		// The state before this row, to return to if it proves implied.
		zSnap, actSnap, actNSnap, uSnap := slices.Clone(z), slices.Clone(act), slices.Clone(actN), slices.Clone(u)
		uplus := append(slices.Clone(u), 0)
		for inner := 0; ; inner++ {
			if inner > 4*(m+n+1) {
				return nil, nil, errQPStalled
			}
			r, rho := project(actN, np)
			// Largest dual step keeping active inequality multipliers >= 0.
			t1, drop := math.Inf(1), -1
			for j, i := range act {
				if i < p.neq || r[j] <= 1e-12 {
					continue
				}
				if t := uplus[j] / r[j]; t < t1 {
					t1, drop = t, j
				}
			}
			rr := dot(rho, rho)
			t2 := math.Inf(1)
			if math.Sqrt(rr) > 1e-10*math.Sqrt(dot(np, np)) {
				t2 = max(0, -slack(pk)/rr)
			}
			if math.IsInf(t1, 1) && math.IsInf(t2, 1) {
				// n_p = Σ r_j n_j with r_j <= 0 on the active inequalities, so
				// they imply n_p·z <= Σ r_j b_j. If that bound reaches b_p
				// (to rounding) the row is not violated in exact arithmetic:
				// only rounding made it look so, in a wedge too thin to
				// resolve. Otherwise the rows are a Farkas certificate.
				implied, size := 0.0, math.Abs(p.rows[pk].b)+p.rows[pk].scale
				for j, i := range act {
					implied += r[j] * sgn[i] * p.rows[i].b
					size += math.Abs(r[j]) * (math.Abs(p.rows[i].b) + p.rows[i].scale)
				}
				if sgn[pk]*p.rows[pk].b-implied <= 1e-12*(1+size) {
					copy(z, zSnap)
					act, actN, u = actSnap, actNSnap, uSnap
					for i := range added {
						added[i] = slices.Contains(act, i)
					}
					skip[pk] = true
					break
				}
				conflict = []int{pk}
				for j, i := range act {
					if math.Abs(r[j]) > 1e-12 {
						conflict = append(conflict, i)
					}
				}
				return nil, conflict, nil
			}
			t := min(t1, t2)
			if !math.IsInf(t2, 1) {
				copy(dir, rho)
				backward(L, n, dir) // z-direction L⁻ᵀ ρ
				for j := range z {
					z[j] += t * dir[j]
				}
			}
			for j := range r {
				uplus[j] -= t * r[j]
			}
			uplus[len(uplus)-1] += t
			if t == t2 {
				act = append(act, pk)
				actN = append(actN, np)
				u = uplus
				added[pk] = true
				clear(skip)
				break
			}
			added[act[drop]] = false
			act = append(act[:drop], act[drop+1:]...)
			actN = append(actN[:drop], actN[drop+1:]...)
			uplus = append(uplus[:drop], uplus[drop+1:]...)
		}
	}
}

// project returns the coefficients r of the least-squares fit of v by the
// columns cols and the residual v − Σ r_j cols_j, by Gram–Schmidt applied
// twice (Giraud et al. 2005: "twice is enough").
func project(cols [][]float64, v []float64) (r, rho []float64) {
	q := len(cols)
	n := len(v)
	Q := make([][]float64, q)
	R := make([]float64, q*q) // upper triangular, row-major
	for j, c := range cols {
		w := append([]float64(nil), c...)
		for pass := 0; pass < 2; pass++ {
			for i := 0; i < j; i++ {
				h := dot(Q[i], w)
				R[i*q+j] += h
				axpy(-h, Q[i], w)
			}
		}
		nr := math.Sqrt(dot(w, w))
		R[j*q+j] = nr
		if nr > 0 {
			for i := range w {
				w[i] /= nr
			}
		}
		Q[j] = w
	}
	rho = append([]float64(nil), v...)
	c := make([]float64, q)
	for pass := 0; pass < 2; pass++ {
		for i := range q {
			h := dot(Q[i], rho)
			c[i] += h
			axpy(-h, Q[i], rho)
		}
	}
	r = make([]float64, q)
	for i := q - 1; i >= 0; i-- {
		s := c[i]
		for j := i + 1; j < q; j++ {
			s -= R[i*q+j] * r[j]
		}
		if R[i*q+i] > 1e-14*float64(n) {
			r[i] = s / R[i*q+i]
		}
	}
	return r, rho
}

// cholesky returns the lower factor L of the row-major n×n matrix A = L Lᵀ.
func cholesky(A []float64, n int) ([]float64, bool) {
	L := make([]float64, n*n)
	for i := range n {
		for j := 0; j <= i; j++ {
			s := A[i*n+j]
			for k := range j {
				s -= L[i*n+k] * L[j*n+k]
			}
			if i == j {
				if !(s > 0) {
					return nil, false
				}
				L[i*n+i] = math.Sqrt(s)
			} else {
				L[i*n+j] = s / L[j*n+j]
			}
		}
	}
	return L, true
}

// forward overwrites x with L⁻¹x.
func forward(L []float64, n int, x []float64) {
	for i := range n {
		s := x[i]
		for k := range i {
			s -= L[i*n+k] * x[k]
		}
		x[i] = s / L[i*n+i]
	}
}

// backward overwrites x with L⁻ᵀx.
func backward(L []float64, n int, x []float64) {
	for i := n - 1; i >= 0; i-- {
		s := x[i]
		for k := i + 1; k < n; k++ {
			s -= L[k*n+i] * x[k]
		}
		x[i] = s / L[i*n+i]
	}
}

// cholSolve overwrites x with (L Lᵀ)⁻¹ x.
func cholSolve(L []float64, n int, x []float64) {
	forward(L, n, x)
	backward(L, n, x)
}

// dot is floats.Dot (gonum), as in internal/varpro.
func dot(x, y []float64) float64 { return floats.Dot(x, y) }

func axpy(a float64, x, y []float64) {
	for i, v := range x {
		y[i] += a * v
	}
}
