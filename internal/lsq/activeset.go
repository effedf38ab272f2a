package lsq

import "math"

// activeSet solves the small problem min ‖M x − z‖ subject to x ≥ 0 by the
// Lawson–Hanson active-set method (Lawson & Hanson 1974, Solving Least
// Squares Problems, ch. 23, algorithm NNLS). M is rows×cols, column-major.
// The callers reduce the user's problem to this one by an orthogonal
// transformation first, so rows ≤ cols+1 and every passive subproblem is a
// QR of a tiny matrix, refactored from scratch each time (simpler than
// updating the factor, and cheap at these sizes).
//
// The two safeguards of the original NNLS code are kept: a column enters the
// passive set only if it is numerically independent of the passive columns
// and its trial coefficient is positive; otherwise it is skipped for that
// round (rounding would otherwise make the method cycle).
type activeSet struct {
	rows, cols int
	m          []float64 // rows×cols, column-major
	z          []float64 // rows
	colScale   []float64 // per column: ‖a_j‖ of the original column
	zScale     float64   // ‖b‖ of the original problem
	tolW       float64   // relative dual tolerance
	tolR       float64   // relative independence tolerance

	x, w     []float64 // cols: iterate, dual Mᵀ(z − M x)
	res      []float64 // rows
	passive  []bool
	rejected []bool
	order    []int     // passive columns, in the order they entered
	qr       []float64 // rows×cols workspace for the passive QR
	qz       []float64 // rows: transformed right-hand side
	sp       []float64 // cols: solution of the passive subproblem, by position
}

// reset sizes the workspace for a rows×cols problem, reusing storage.
func (a *activeSet) reset(rows, cols int) {
	a.rows, a.cols = rows, cols
	a.m = grow(a.m, rows*cols)
	a.z = grow(a.z, rows)
	a.colScale = grow(a.colScale, cols)
	a.x = grow(a.x, cols)
	a.w = grow(a.w, cols)
	a.res = grow(a.res, rows)
	a.passive = growBool(a.passive, cols)
	a.rejected = growBool(a.rejected, cols)
	if cap(a.order) < cols {
		a.order = make([]int, 0, cols)
	}
	a.order = a.order[:0]
	a.qr = grow(a.qr, rows*cols)
	a.qz = grow(a.qz, rows)
	a.sp = grow(a.sp, cols)
}

// solve runs the active-set iteration; the result is in a.x and the residual
// norm is returned.
func (a *activeSet) solve() (float64, error) {
	n := a.cols
	clear(a.x)
	clear(a.passive)
	a.order = a.order[:0]
	a.dual()
	for iter := 0; ; iter++ {
		if iter >= maxIter(n) {
			return a.rnorm(), ErrNoConvergence
		}
		clear(a.rejected)
		// Choose the entering column: the largest dual among the zero
		// coordinates that passes the safeguards.
		entered := false
		for {
			t := -1
			best := 0.0
			for j := 0; j < n; j++ {
				if a.passive[j] || a.rejected[j] {
					continue
				}
				if w := a.w[j]; w > a.tolW*a.colScale[j]*a.zScale && w > best {
					t, best = j, w
				}
			}
			if t < 0 {
				break
			}
			a.order = append(a.order, t)
			if a.factorSolve(true) && a.sp[len(a.order)-1] > 0 {
				a.passive[t] = true
				entered = true
				break
			}
			a.order = a.order[:len(a.order)-1]
			a.rejected[t] = true
		}
		if !entered {
			return a.rnorm(), nil
		}
		// Inner loop: move from x towards the passive solution until it is
		// feasible, dropping the coordinates that hit zero.
		for {
			allPos := true
			for k := range a.order {
				if a.sp[k] <= 0 {
					allPos = false
					break
				}
			}
			if allPos {
				for k, j := range a.order {
					a.x[j] = a.sp[k]
				}
				break
			}
			alpha := math.Inf(1)
			for k, j := range a.order {
				if s := a.sp[k]; s <= 0 {
					alpha = min(alpha, stepToZero(a.x[j], s))
				}
			}
			keep := a.order[:0]
			for k, j := range a.order {
				xj := a.x[j] + alpha*(a.sp[k]-a.x[j])
				// The coordinate(s) attaining alpha land on zero exactly
				// in exact arithmetic; force it so the set shrinks.
				if xj <= 0 || (a.sp[k] <= 0 && stepToZero(a.x[j], a.sp[k]) <= alpha) {
					a.x[j] = 0
					a.passive[j] = false
					continue
				}
				a.x[j] = xj
				keep = append(keep, j)
			}
			a.order = keep
			a.factorSolve(false)
		}
		a.dual()
	}
}

// stepToZero is the fraction of the way from x ≥ 0 to s ≤ 0 at which the
// coordinate reaches zero.
func stepToZero(x, s float64) float64 {
	if d := x - s; d > 0 {
		return x / d
	}
	return 0
}

// dual sets res = z − M x and w = Mᵀ res.
func (a *activeSet) dual() {
	r := a.rows
	copy(a.res, a.z[:r])
	for j := 0; j < a.cols; j++ {
		if xj := a.x[j]; xj != 0 {
			col := a.m[j*r : (j+1)*r]
			for i, v := range col {
				a.res[i] -= v * xj
			}
		}
	}
	for j := 0; j < a.cols; j++ {
		col := a.m[j*r : (j+1)*r]
		var d float64
		for i, v := range col {
			d += v * a.res[i]
		}
		a.w[j] = d
	}
}

func (a *activeSet) rnorm() float64 {
	a.dual()
	return norm2(a.res[:a.rows])
}

// factorSolve solves min ‖M_P s − z‖ for the passive columns a.order by
// Householder QR, leaving s by position in a.sp. With checkLast it reports
// whether the last column is independent of the others (its R diagonal is
// not negligible against its original norm); otherwise it always succeeds,
// zeroing coefficients whose diagonal vanished (which rounding alone could
// cause, since columns passed the test when they entered).
func (a *activeSet) factorSolve(checkLast bool) bool {
	r, p := a.rows, len(a.order)
	if p > r {
		return false
	}
	for k, j := range a.order {
		copy(a.qr[k*r:(k+1)*r], a.m[j*r:(j+1)*r])
	}
	qz := a.qz[:r]
	copy(qz, a.z[:r])
	for k := 0; k < p; k++ {
		col := a.qr[k*r : (k+1)*r]
		beta, tau, ok := householder(col[k:])
		if !ok {
			continue
		}
		for l := k + 1; l < p; l++ {
			applyHouseholder(col[k:], tau, a.qr[l*r+k:(l+1)*r])
		}
		applyHouseholder(col[k:], tau, qz[k:])
		col[k] = beta
	}
	if checkLast {
		t := a.order[p-1]
		if math.Abs(a.qr[(p-1)*r+p-1]) <= a.tolR*a.colScale[t] {
			return false
		}
	}
	// Back substitution R s = (Qᵀ z)[:p].
	for k := p - 1; k >= 0; k-- {
		d := a.qr[k*r+k]
		if d == 0 || math.Abs(d) <= a.tolR*a.colScale[a.order[k]] {
			a.sp[k] = 0
			continue
		}
		v := qz[k]
		for l := k + 1; l < p; l++ {
			v -= a.qr[l*r+k] * a.sp[l]
		}
		a.sp[k] = v / d
	}
	return true
}

// householder overwrites v with the Householder vector u (u₀ = 1) and
// returns β and τ such that (I − τ u uᵀ) v = β e₁ (LAPACK's Dlarfg
// convention: dividing by u₀ rather than multiplying small numbers keeps it
// free of underflow). ok is false when v is zero.
func householder(v []float64) (beta, tau float64, ok bool) {
	nrm := fastNorm(v)
	if nrm == 0 {
		return 0, 0, false
	}
	beta = -math.Copysign(nrm, v[0])
	u0 := v[0] - beta
	tau = -u0 / beta
	if math.Abs(u0) > 0x1p-1000 {
		// |v_i| ≤ |u₀|, so the reciprocal is finite and the products ≤ 1.
		inv := 1 / u0
		for i := 1; i < len(v); i++ {
			v[i] *= inv
		}
	} else {
		for i := 1; i < len(v); i++ {
			v[i] /= u0
		}
	}
	v[0] = 1
	return beta, tau, true
}

// applyHouseholder applies I − τ u uᵀ to y in place.
func applyHouseholder(u []float64, tau float64, y []float64) {
	var d float64
	for i, ui := range u {
		d += ui * y[i]
	}
	d *= tau
	for i, ui := range u {
		y[i] -= d * ui
	}
}

// norm2 is the Euclidean norm, scaled to avoid overflow and underflow.
func norm2(v []float64) float64 {
	var scale, ssq float64 = 0, 1
	for _, x := range v {
		if x == 0 {
			continue
		}
		ax := math.Abs(x)
		if scale < ax {
			ssq = 1 + ssq*(scale/ax)*(scale/ax)
			scale = ax
		} else {
			ssq += (ax / scale) * (ax / scale)
		}
	}
	return scale * math.Sqrt(ssq)
}

func grow(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}

func growBool(s []bool, n int) []bool {
	if cap(s) < n {
		return make([]bool, n)
	}
	return s[:n]
}
