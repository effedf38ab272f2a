// Package varpro solves separable nonlinear least-squares problems by
// variable projection (Golub & Pereyra 1973, with Kaufman's 1975 Jacobian):
//
//	min_{θ, c, γ}  ‖ y − F γ − Σ_l c_l M_l(θ) ‖²,   lo ≤ θ ≤ hi,  (c ≥ 0 optionally)
//
// For each θ the linear coefficients (γ for the fixed columns F, c for the
// θ-dependent columns M) are solved exactly, so the search runs over θ
// alone. The outer search is a box-constrained Levenberg–Marquardt method
// with Marquardt's diagonal scaling: the variables held at a bound whose
// gradient points outward are frozen for the step, the others take the
// damped Gauss–Newton step, and the result is projected back into the box.
package varpro

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"sluice/internal/lsq"
)

// Problem is a separable least-squares problem.
type Problem struct {
	Y     []float64  // observations, length n
	Fixed *mat.Dense // n×p columns that do not depend on θ (may be nil)

	NumVarying int  // L, the number of θ-dependent columns M_l
	NonNeg     bool // whether the coefficients of the M_l must be ≥ 0

	Lower, Upper []float64 // bounds on θ; ±Inf for none

	// Columns writes M_l(θ) into cols[l] (each of length n).
	Columns func(theta []float64, cols [][]float64)
	// Deriv writes into d[j] (length n) the derivative with respect to θ_j
	// of Σ_l coef_l M_l(θ), for every j. theta and coef are those of the
	// last Columns call.
	Deriv func(theta, coef []float64, d [][]float64)

	// Priors, if not nil, holds one prior per θ_j (a zero Prior is none).
	// Each adds the residual Weight·(g(θ_j) − Center)/Scale to the
	// objective, g the identity or log: a Gaussian prior on θ_j or log θ_j
	// when Weight is the noise SD of the observations, which makes the
	// minimum a maximum a posteriori estimate. The linear coefficients stay
	// exact; their priors are extra rows of the observations (the caller's).
	Priors []Prior
}

// Prior is a Gaussian prior on one nonlinear parameter, as a penalty
// residual Weight·(g(θ) − Center)/Scale with g = log when Log is set. A zero
// Scale means no prior.
type Prior struct {
	Center, Scale, Weight float64
	Log                   bool
}

// residual returns the prior residual at v and its derivative.
func (p Prior) residual(v float64) (r, dr float64) {
	if p.Scale == 0 {
		return 0, 0
	}
	w := p.Weight / p.Scale
	if p.Log {
		return w * (math.Log(v) - p.Center), w / v
	}
	return w * (v - p.Center), w
}

// Penalty returns Σ_j prior residual_j² at theta (0 without priors).
func (p *Problem) Penalty(theta []float64) float64 {
	var s float64
	for j, pr := range p.Priors {
		r, _ := pr.residual(theta[j])
		s += r * r
	}
	return s
}

// Settings controls the search. The zero value is usable.
type Settings struct {
	MaxEvaluations int     // objective evaluations per start; 0 means 400
	RelTol         float64 // relative reduction of the RSS that counts as no progress; 0 means 1e-12
	// GradTol is the largest cosine between the residual and a Jacobian
	// column accepted as stationary once steps stop reducing the RSS
	// (round-off and the kinks of the non-negativity constraints keep it
	// from reaching zero); 0 means 1e-5. The search stops early, before it
	// stalls, when the cosine falls below EarlyGradTol.
	GradTol float64
	// FlatTol: the search also stops, as converged, when the objective fell
	// by less than this share over the last FlatIterations accepted steps
	// while no cosine exceeds FlatGradTol — a search creeping along a flat
	// curved valley (a MAP fit's priors make such valleys) whose remaining
	// gain is far below the objective's sampling variation (of order 1/n
	// relative: 1e-6 of the objective is 1e-6·n in units of −2 log-likelihood).
	// Zero turns the rule off (the certified problems need every digit);
	// statistical fits use 1e-6 (model.Design.Fit).
	FlatTol float64
}

// FlatIterations and FlatGradTol qualify Settings.FlatTol.
const (
	FlatIterations = 10
	FlatGradTol    = 1e-2
)

// Status says why a search stopped.
type Status int

const (
	Converged      Status = iota // stationary point within tolerances
	MaxEvaluations               // evaluation budget spent before convergence
	NoProgress                   // steps no longer reduce the RSS but the gradient test fails
	Degenerate                   // the Jacobian lost rank (e.g. parameters running off to infinity)
)

func (s Status) String() string {
	switch s {
	case Converged:
		return "converged"
	case MaxEvaluations:
		return "evaluation limit reached"
	case NoProgress:
		return "no further progress"
	case Degenerate:
		return "degenerate Jacobian"
	}
	return "unknown"
}

// Result is the outcome of one search.
type Result struct {
	Theta       []float64 // nonlinear parameters
	Coef        []float64 // coefficients of the varying columns
	FixedCoef   []float64 // coefficients of the fixed columns
	RSS         float64   // the minimized objective: residual sum of squares plus Penalty
	Penalty     float64   // the priors' part of RSS (Problem.Penalty at Theta)
	Status      Status
	Evaluations int
	Iterations  int
}

// EarlyGradTol is the cosine below which a search stops before stalling:
// clearly stationary.
const EarlyGradTol = 1e-8

// ErrBadStart reports a start outside the bounds or an RSS that is not finite there.
var ErrBadStart = errors.New("varpro: start is outside the bounds or gives a non-finite objective")

// Solver holds the workspace for a problem; reuse it across starts to avoid
// allocation. It is not safe for concurrent use.
type Solver struct {
	p       *Problem
	n, nf   int
	qf      [][]float64 // orthonormal basis of span(Fixed): nf columns of length n
	yt      []float64   // P_F⊥ y
	cols    [][]float64
	colsT   [][]float64 // P_F⊥ M_l
	d       [][]float64
	gram    *mat.SymDense
	rhs     []float64
	coef    []float64
	resid   []float64
	gsolver lsq.GramSolver
	qa      [][]float64 // orthonormal basis of the active varying columns
	qbuf    [][]float64
}

// NewSolver prepares the projection onto the fixed columns.
func NewSolver(p *Problem) (*Solver, error) {
	n := len(p.Y)
	s := &Solver{p: p, n: n}
	s.yt = append([]float64(nil), p.Y...)
	if p.Fixed != nil {
		r, c := p.Fixed.Dims()
		if r != n {
			panic("varpro: fixed columns and observations differ in length")
		}
		// Orthonormalize the fixed columns by modified Gram–Schmidt with
		// one reorthogonalization pass: the thin basis costs O(n·p²),
		// where forming QR's full n×n Q would cost O(n²·p).
		s.qf = alloc(c, n)
		for j := range c {
			q := s.qf[j]
			mat.Col(q, j, p.Fixed)
			norm0 := math.Sqrt(dot(q, q))
			for pass := 0; pass < 2; pass++ {
				for _, b := range s.qf[:j] {
					axpy(-dot(b, q), b, q)
				}
			}
			nrm := math.Sqrt(dot(q, q))
			if norm0 == 0 || nrm <= 1e-10*norm0 {
				return nil, errors.New("varpro: the fixed columns are linearly dependent")
			}
			scale(1/nrm, q)
		}
		s.nf = c
		s.projectFixed(s.yt)
	}
	L := p.NumVarying
	m := len(p.Lower)
	s.cols = alloc(L, n)
	s.colsT = alloc(L, n)
	s.d = alloc(m, n)
	s.gram = mat.NewSymDense(L, nil)
	s.rhs = make([]float64, L)
	s.coef = make([]float64, L)
	s.resid = make([]float64, n)
	s.qbuf = alloc(L, n)
	return s, nil
}

func alloc(k, n int) [][]float64 {
	back := make([]float64, k*n)
	out := make([][]float64, k)
	for i := range out {
		out[i] = back[i*n : (i+1)*n : (i+1)*n]
	}
	return out
}

// projectFixed replaces v by P_F⊥ v (the basis is orthonormal, so the
// projections can be taken one column at a time).
func (s *Solver) projectFixed(v []float64) {
	for _, q := range s.qf {
		axpy(-dot(q, v), q, v)
	}
}

// Evaluate computes the linear coefficients and the RSS at theta. The
// residual and coefficients are kept for a following Jacobian call.
func (s *Solver) Evaluate(theta []float64) (float64, error) {
	p := s.p
	L := p.NumVarying
	p.Columns(theta, s.cols)
	for l := range L {
		copy(s.colsT[l], s.cols[l])
		s.projectFixed(s.colsT[l])
	}
	for a := range L {
		s.rhs[a] = dot(s.colsT[a], s.yt)
		for b := a; b < L; b++ {
			s.gram.SetSym(a, b, dot(s.colsT[a], s.colsT[b]))
		}
	}
	if p.NonNeg {
		if _, err := s.gsolver.Solve(s.coef, s.gram, s.rhs); err != nil {
			return math.Inf(1), err
		}
	} else if err := s.solveFree(); err != nil {
		return math.Inf(1), err
	}
	copy(s.resid, s.yt)
	for l := range L {
		c := s.coef[l]
		if c == 0 {
			continue
		}
		for i, v := range s.colsT[l] {
			s.resid[i] -= c * v
		}
	}
	rss := dot(s.resid, s.resid)
	if math.IsNaN(rss) || math.IsInf(rss, 0) {
		return math.Inf(1), nil
	}
	return rss, nil
}

// solveFree solves the unconstrained linear subproblem by QR of the
// projected columns (not normal equations, which square the condition).
func (s *Solver) solveFree() error {
	L := s.p.NumVarying
	a := mat.NewDense(s.n, L, nil)
	for l := range L {
		a.SetCol(l, s.colsT[l])
	}
	var qr mat.QR
	qr.Factorize(a)
	var x mat.VecDense
	if err := qr.SolveVecTo(&x, false, mat.NewVecDense(s.n, s.yt)); err != nil {
		for l := range s.coef {
			s.coef[l] = math.NaN()
		}
		return nil
	}
	for l := range L {
		s.coef[l] = x.AtVec(l)
	}
	return nil
}

// jacobian fills jc (one n-vector per parameter) with Kaufman's
// approximation −P_A⊥ ∂(M c)/∂θ, where A holds the fixed columns and the
// varying columns with a nonzero coefficient. Call after Evaluate at the
// same theta. The active columns are orthonormalized by modified
// Gram–Schmidt with one reorthogonalization pass (O(n·k²), no n×n Q).
func (s *Solver) jacobian(theta []float64, jc [][]float64) {
	p := s.p
	p.Deriv(theta, s.coef, s.d)
	qa := s.qa[:0]
	for l, c := range s.coef {
		if c == 0 {
			continue
		}
		q := s.qbuf[len(qa)]
		copy(q, s.colsT[l])
		for pass := 0; pass < 2; pass++ {
			for _, b := range qa {
				axpy(-dot(b, q), b, q)
			}
		}
		nrm := math.Sqrt(dot(q, q))
		if nrm <= 1e-12*math.Sqrt(dot(s.colsT[l], s.colsT[l])) || nrm == 0 {
			continue // numerically inside the span already
		}
		scale(1/nrm, q)
		qa = append(qa, q)
	}
	s.qa = qa
	for j := range theta {
		d := s.d[j]
		s.projectFixed(d)
		for _, b := range qa {
			axpy(-dot(b, d), b, d)
		}
		out := jc[j]
		for t, v := range d {
			out[t] = -v
		}
	}
}

func axpy(a float64, x, y []float64) { floats.AddScaled(y, a, x) }

func scale(a float64, x []float64) {
	for i := range x {
		x[i] *= a
	}
}

// normalMatrix writes JᵀJ into jtj and Jᵀr into grad.
func normalMatrix(jc [][]float64, r []float64, jtj *mat.SymDense, grad []float64) {
	for a := range jc {
		grad[a] = dot(jc[a], r)
		for b := a; b < len(jc); b++ {
			jtj.SetSym(a, b, dot(jc[a], jc[b]))
		}
	}
}

// Solve runs the box-constrained Levenberg–Marquardt search from start.
func (s *Solver) Solve(start []float64, set Settings) (Result, error) {
	p := s.p
	m := len(start)
	if len(p.Lower) != m || len(p.Upper) != m {
		panic("varpro: start and bounds differ in length")
	}
	if p.Priors != nil && len(p.Priors) != m {
		panic("varpro: priors and start differ in length")
	}
	maxEval := set.MaxEvaluations
	if maxEval == 0 {
		maxEval = 400
	}
	relTol := set.RelTol
	if relTol == 0 {
		relTol = 1e-12
	}
	gradTol := set.GradTol
	if gradTol == 0 {
		gradTol = 1e-5
	}
	theta := append([]float64(nil), start...)
	for j, v := range theta {
		if v < p.Lower[j] || v > p.Upper[j] || math.IsNaN(v) {
			return Result{}, ErrBadStart
		}
	}
	rss, err := s.objective(theta)
	if err != nil {
		return Result{}, err
	}
	if math.IsInf(rss, 1) {
		return Result{}, ErrBadStart
	}
	res := Result{Evaluations: 1}
	jac := alloc(m, s.n)
	jtj := mat.NewSymDense(m, nil)
	grad := make([]float64, m)
	trial := make([]float64, m)
	bestCoef := append([]float64(nil), s.coef...)
	flatTol := set.FlatTol
	var history []float64 // objective after each accepted step
	mu := 1e-3
	stall := 0
	status := MaxEvaluations
	for res.Evaluations < maxEval {
		res.Iterations++
		s.jacobian(theta, jac)
		normalMatrix(jac, s.resid, jtj, grad) // grad = Jᵀ r, the gradient of ½ RSS
		s.addPriors(theta, jtj, grad)
		// Which variables may move: not pinned at a bound by the gradient.
		free := make([]int, 0, m)
		var maxCos float64
		rnorm := math.Sqrt(rss)
		for j := range m {
			atLo := theta[j] <= p.Lower[j] && grad[j] > 0
			atHi := theta[j] >= p.Upper[j] && grad[j] < 0
			// A parameter with a zero Jacobian column (its linear
			// coefficient is held at zero) cannot move the fit.
			if atLo || atHi || jtj.At(j, j) == 0 {
				continue
			}
			free = append(free, j)
			if cn := math.Sqrt(jtj.At(j, j)) * rnorm; cn > 0 {
				maxCos = math.Max(maxCos, math.Abs(grad[j])/cn)
			}
		}
		// Stop early only when clearly stationary; near the round-off floor
		// the search stalls instead and the looser test below decides.
		if n := len(history); flatTol > 0 && n >= FlatIterations && maxCos <= FlatGradTol &&
			history[n-FlatIterations]-rss <= flatTol*rss {
			status = Converged
			break
		}
		if len(free) == 0 || maxCos <= EarlyGradTol || rss == 0 {
			status = Converged
			if degenerate(jtj, nonzero(jtj)) {
				status = Degenerate
			}
			break
		}
		improved := false
		for res.Evaluations < maxEval {
			step, ok := lmStep(jtj, grad, free, mu)
			if !ok {
				mu *= 10
				if mu > 1e16 {
					break
				}
				continue
			}
			copy(trial, theta)
			for i, j := range free {
				trial[j] = math.Min(p.Upper[j], math.Max(p.Lower[j], theta[j]+step[i]))
			}
			tr, err := s.objective(trial)
			res.Evaluations++
			if err == nil && tr < rss {
				rel := (rss - tr) / math.Max(rss, math.SmallestNonzeroFloat64)
				copy(theta, trial)
				copy(bestCoef, s.coef)
				rss = tr
				history = append(history, rss)
				mu = math.Max(mu/3, 1e-12)
				improved = true
				if rel < relTol {
					stall++
				} else {
					stall = 0
				}
				break
			}
			mu *= 4
			if mu > 1e16 {
				break
			}
		}
		if !improved || stall >= 3 {
			// Re-evaluate at the accepted point so the residual matches theta.
			s.Evaluate(theta)
			res.Evaluations++
			s.jacobian(theta, jac)
			normalMatrix(jac, s.resid, jtj, grad)
			s.addPriors(theta, jtj, grad)
			switch {
			case degenerate(jtj, nonzero(jtj)):
				status = Degenerate
			case converged(jtj, grad, rss, theta, p, gradTol):
				status = Converged
			case flatTol > 0 && converged(jtj, grad, rss, theta, p, FlatGradTol):
				// Steps no longer reduce the objective and the gradient is
				// within the flat rule's tolerance: as stationary as the
				// rule asks.
				status = Converged
			default:
				status = NoProgress
			}
			break
		}
	}
	if status == MaxEvaluations || status == Converged || status == Degenerate {
		s.Evaluate(theta) // make the kept residual and coefficients those of theta
	}
	copy(bestCoef, s.coef)
	res.Theta = theta
	res.Coef = bestCoef
	res.RSS = rss
	res.Penalty = p.Penalty(theta)
	res.Status = status
	res.FixedCoef = s.fixedCoef()
	return res, nil
}

// objective is Evaluate plus the priors' penalty.
func (s *Solver) objective(theta []float64) (float64, error) {
	rss, err := s.Evaluate(theta)
	if err != nil || math.IsInf(rss, 1) {
		return rss, err
	}
	return rss + s.p.Penalty(theta), nil
}

// addPriors adds the prior rows to JᵀJ and Jᵀr: each is a residual of θ_j
// alone, so it adds to the diagonal and to the gradient only.
func (s *Solver) addPriors(theta []float64, jtj *mat.SymDense, grad []float64) {
	for j, pr := range s.p.Priors {
		r, dr := pr.residual(theta[j])
		if dr == 0 {
			continue
		}
		jtj.SetSym(j, j, jtj.At(j, j)+dr*dr)
		grad[j] += dr * r
	}
}

// converged applies the gradient (cosine) test at theta; obj is the
// objective (residual and prior rows) there.
func converged(jtj *mat.SymDense, grad []float64, obj float64, theta []float64, p *Problem, gradTol float64) bool {
	rnorm := math.Sqrt(obj)
	if rnorm == 0 {
		return true
	}
	for j, g := range grad {
		if (theta[j] <= p.Lower[j] && g > 0) || (theta[j] >= p.Upper[j] && g < 0) {
			continue
		}
		if c := jtj.At(j, j); c > 0 && math.Abs(g)/(math.Sqrt(c)*rnorm) > gradTol {
			return false
		}
	}
	return true
}

// nonzero lists the parameters whose Jacobian column is not zero.
func nonzero(jtj *mat.SymDense) []int {
	var out []int
	for j := range jtj.SymmetricDim() {
		if jtj.At(j, j) > 0 {
			out = append(out, j)
		}
	}
	return out
}

// degenerate reports whether the free block of JᵀJ has lost rank, which is
// what happens when parameters run off towards infinity.
func degenerate(jtj *mat.SymDense, free []int) bool {
	k := len(free)
	if k == 0 {
		return false
	}
	sub := mat.NewSymDense(k, nil)
	for a, i := range free {
		for b := a; b < k; b++ {
			sub.SetSym(a, b, jtj.At(i, free[b]))
		}
	}
	// Scale to unit diagonal so the test is invariant to parameter units.
	d := make([]float64, k)
	for i := range k {
		d[i] = math.Sqrt(sub.At(i, i))
		if d[i] == 0 {
			return true
		}
	}
	for a := range k {
		for b := a; b < k; b++ {
			sub.SetSym(a, b, sub.At(a, b)/(d[a]*d[b]))
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(sub, false) {
		return true
	}
	v := eig.Values(nil)
	return v[0] < 1e-15*v[k-1]
}

// lmStep solves (JᵀJ + μ diag(JᵀJ)) δ = −g over the free variables.
func lmStep(jtj *mat.SymDense, grad []float64, free []int, mu float64) ([]float64, bool) {
	k := len(free)
	a := mat.NewSymDense(k, nil)
	b := mat.NewVecDense(k, nil)
	for i, fi := range free {
		for j := i; j < k; j++ {
			a.SetSym(i, j, jtj.At(fi, free[j]))
		}
		dg := jtj.At(fi, fi)
		a.SetSym(i, i, dg*(1+mu)+1e-300)
		b.SetVec(i, -grad[fi])
	}
	var ch mat.Cholesky
	if !ch.Factorize(a) {
		return nil, false
	}
	var x mat.VecDense
	if err := ch.SolveVecTo(&x, b); err != nil {
		return nil, false
	}
	out := make([]float64, k)
	for i := range k {
		out[i] = x.AtVec(i)
		if math.IsNaN(out[i]) || math.IsInf(out[i], 0) {
			return nil, false
		}
	}
	return out, true
}

// fixedCoef recovers γ = argmin ‖(y − M c) − F γ‖ for the current coefficients.
func (s *Solver) fixedCoef() []float64 {
	if s.p.Fixed == nil {
		return nil
	}
	r := append([]float64(nil), s.p.Y...)
	for l, c := range s.coef {
		for i, v := range s.cols[l] {
			r[i] -= c * v
		}
	}
	var qr mat.QR
	qr.Factorize(s.p.Fixed)
	var x mat.VecDense
	if err := qr.SolveVecTo(&x, false, mat.NewVecDense(s.n, r)); err != nil {
		return nil
	}
	return append([]float64(nil), x.RawVector().Data...)
}

func dot(a, b []float64) float64 { return floats.Dot(a, b) }

// StdErrors returns the asymptotic standard errors of the fixed
// coefficients, the varying coefficients and θ at a result, from
// σ² (JᵀJ)⁻¹ with the full Jacobian of all parameters and
// σ² = RSS / (n − number of parameters), as NIST StRD certifies them.
// Coefficients held at zero by the non-negativity constraint count as
// parameters too.
func (s *Solver) StdErrors(res Result) (fixedSE, coefSE, thetaSE []float64, err error) {
	p := s.p
	if _, err := s.Evaluate(res.Theta); err != nil {
		return nil, nil, nil, err
	}
	copy(s.coef, res.Coef)
	p.Deriv(res.Theta, s.coef, s.d)
	L, m := p.NumVarying, len(res.Theta)
	k := s.nf + L + m
	dof := s.n - k
	if dof <= 0 {
		return nil, nil, nil, errors.New("varpro: no degrees of freedom left for standard errors")
	}
	jac := mat.NewDense(s.n, k, nil)
	for j := range s.nf {
		for t := range s.n {
			jac.Set(t, j, p.Fixed.At(t, j))
		}
	}
	for l := range L {
		jac.SetCol(s.nf+l, s.cols[l])
	}
	for j := range m {
		jac.SetCol(s.nf+L+j, s.d[j])
	}
	var qr mat.QR
	qr.Factorize(jac)
	var rd mat.Dense
	qr.RTo(&rd)
	r := mat.NewTriDense(k, mat.Upper, nil)
	for i := range k {
		for j := i; j < k; j++ {
			r.SetTri(i, j, rd.At(i, j))
		}
	}
	var rinv mat.TriDense
	if err := rinv.InverseTri(r); err != nil {
		return nil, nil, nil, errors.New("varpro: the Jacobian is singular; standard errors undefined")
	}
	var cov mat.Dense
	cov.Mul(&rinv, rinv.T())
	sigma2 := (res.RSS - res.Penalty) / float64(dof)
	se := make([]float64, k)
	for j := range k {
		se[j] = math.Sqrt(sigma2 * cov.At(j, j))
	}
	return se[:s.nf], se[s.nf : s.nf+L], se[s.nf+L:], nil
}
