package lsq

import (
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// gramDropTol is the relative Cholesky pivot below which NNLSGram treats an
// entering column as dependent on the passive ones and leaves it at zero.
// The pivot of column t is G_tt·sin²θ, θ the angle between a_t and the span
// of the passive columns. Rounding in forming G and in the factor leaves a
// truly dependent column with a relative pivot that is not zero: about
// 1e-12 at most in the seeded experiment of TestGramDropMargin (2000
// designs, 20–520 rows, up to 11 columns with scales 10^(±4) and chained
// correlation, the last an exact random combination of the others), which
// requires a factor 10 below this tolerance. Dropping
// keeps the fit unbiased (no ridge) and exact whenever the column truly is a
// combination of the passive ones; the price is that a column closer than
// sinθ ≈ 1e-5 to the passive span never enters, which QR-based NNLS would
// still resolve, so the KKT conditions hold only to about 1e-5·‖a_t‖·‖r‖
// for such a column.
const gramDropTol = 1e-10

// gramDualTol scales the entering test w_j > gramDualTol·√G_jj·β, with
// β = max_i |c_i|/√G_ii ≤ ‖b‖ the best available estimate of ‖b‖.
const gramDualTol = 1e-12

// NNLSGram solves min ‖A x − b‖₂ subject to x ≥ 0 given only G = AᵀA and
// c = Aᵀb, writing x into dst (len k, or nil to allocate) and returning it.
// See GramSolver for the method; the workspace comes from a pool.
func NNLSGram(dst []float64, g *mat.SymDense, c []float64) ([]float64, error) {
	s := gramPool.Get().(*GramSolver)
	defer gramPool.Put(s)
	return s.Solve(dst, g, c)
}

var gramPool = sync.Pool{New: func() any { return new(GramSolver) }}

// GramSolver solves the NNLS problem from its normal-equation data, for the
// fit's inner loop where k (the number of media channels) is small and G and
// c are cheap to update. It runs the Lawson–Hanson active-set method on
//
//	minimise ½ xᵀG x − cᵀx subject to x ≥ 0
//
// (the same minimiser as min ‖A x − b‖ with x ≥ 0), with dual w = c − G x
// and each passive subproblem G_PP s = c_P solved by a Cholesky factor that
// grows by one row as a column enters and is refactored when columns leave.
//
// (Near-)collinear columns: a column whose Cholesky pivot would be below
// 1e-10 of its diagonal (sinθ < 1e-5 against the passive columns; see
// gramDropTol) counts as dependent and is dropped, i.e. kept at zero; no
// ridge is added. The result therefore never contains NaN for finite input,
// and for exactly collinear columns it is one of the minimisers. Because G
// squares the condition number, prefer NNLS or BoundedSolver when A is at
// hand and ill-conditioned. Entries of A whose squares underflow are lost
// in G; that is the caller's G, not something Solve can repair.
//
// The zero value is ready to use; it sizes its workspace on the first call
// and reuses it, so calls with the same or smaller k do not allocate.
// A GramSolver must not be used by several goroutines at once.
type GramSolver struct {
	k        int
	g        []float64 // k×k, full symmetric copy
	x, w, sp []float64
	l        []float64 // Cholesky factor of G_PP, lower, row-major, stride k
	y        []float64
	scale    []float64 // √G_jj
	order    []int
	passive  []bool
	rejected []bool
}

// NewGramSolver returns a GramSolver with workspace for k coefficients.
func NewGramSolver(k int) *GramSolver {
	s := &GramSolver{}
	s.reset(k)
	return s
}

func (s *GramSolver) reset(k int) {
	s.k = k
	s.g = grow(s.g, k*k)
	s.x = grow(s.x, k)
	s.w = grow(s.w, k)
	s.sp = grow(s.sp, k)
	s.l = grow(s.l, k*k)
	s.y = grow(s.y, k)
	s.scale = grow(s.scale, k)
	if cap(s.order) < k {
		s.order = make([]int, 0, k)
	}
	s.order = s.order[:0]
	s.passive = growBool(s.passive, k)
	s.rejected = growBool(s.rejected, k)
}

// Solve solves the problem for G = g (k×k, symmetric positive
// semidefinite) and c (len k) into x (len k, or nil to allocate) and returns
// x. It returns ErrNotFinite for NaN or infinite input and an error for a
// negative diagonal of g; with ErrNoConvergence x is feasible, not optimal.
func (s *GramSolver) Solve(x []float64, g *mat.SymDense, c []float64) ([]float64, error) {
	k := g.SymmetricDim()
	if len(c) != k {
		panic("lsq: len(c) != dimension of g")
	}
	if x == nil {
		x = make([]float64, k)
	} else if len(x) != k {
		panic("lsq: len(x) != dimension of g")
	}
	s.reset(k)
	raw := g.RawSymmetric() // upper triangle stored
	for i := 0; i < k; i++ {
		for j := i; j < k; j++ {
			v := raw.Data[i*raw.Stride+j]
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return x, fmt.Errorf("%w: g[%d,%d] = %v", ErrNotFinite, i, j, v)
			}
			s.g[i*k+j] = v
			s.g[j*k+i] = v
		}
	}
	if err := checkFinite("c", c); err != nil {
		return x, err
	}
	var beta float64
	for j := 0; j < k; j++ {
		d := s.g[j*k+j]
		if d < 0 {
			return x, fmt.Errorf("lsq: g[%d,%d] = %v is negative; g is not a Gram matrix", j, j, d)
		}
		s.scale[j] = math.Sqrt(d)
		if d > 0 {
			beta = max(beta, math.Abs(c[j])/s.scale[j])
		}
	}

	clear(s.x)
	clear(s.passive)
	s.dual(c)
	for iter := 0; ; iter++ {
		if iter >= maxIter(k) {
			copy(x, s.x)
			return x, ErrNoConvergence
		}
		clear(s.rejected)
		entered := false
		for {
			t := -1
			best := 0.0
			for j := 0; j < k; j++ {
				if s.passive[j] || s.rejected[j] {
					continue
				}
				if w := s.w[j]; w > gramDualTol*s.scale[j]*beta && w > best {
					t, best = j, w
				}
			}
			if t < 0 {
				break
			}
			if s.appendChol(t) {
				s.solvePassive(c)
				if s.sp[len(s.order)-1] > 0 {
					s.passive[t] = true
					entered = true
					break
				}
				s.order = s.order[:len(s.order)-1]
			}
			s.rejected[t] = true
		}
		if !entered {
			copy(x, s.x)
			return x, nil
		}
		for {
			allPos := true
			for p := range s.order {
				if s.sp[p] <= 0 {
					allPos = false
					break
				}
			}
			if allPos {
				for p, j := range s.order {
					s.x[j] = s.sp[p]
				}
				break
			}
			alpha := math.Inf(1)
			for p, j := range s.order {
				if sp := s.sp[p]; sp <= 0 {
					alpha = min(alpha, stepToZero(s.x[j], sp))
				}
			}
			keep := s.order[:0]
			for p, j := range s.order {
				xj := s.x[j] + alpha*(s.sp[p]-s.x[j])
				if xj <= 0 || (s.sp[p] <= 0 && stepToZero(s.x[j], s.sp[p]) <= alpha) {
					s.x[j] = 0
					s.passive[j] = false
					continue
				}
				s.x[j] = xj
				keep = append(keep, j)
			}
			s.order = keep
			s.refactor()
			s.solvePassive(c)
		}
		s.dual(c)
	}
}

// dual sets w = c − G x.
func (s *GramSolver) dual(c []float64) {
	k := s.k
	for i := 0; i < k; i++ {
		row := s.g[i*k : (i+1)*k]
		v := c[i]
		for j, xj := range s.x[:k] {
			v -= row[j] * xj
		}
		s.w[i] = v
	}
}

// appendChol extends the Cholesky factor of G_PP by column t. It reports
// false, leaving the factor as it was, when t is dependent on the passive
// columns (pivot ≤ gramDropTol·G_tt) or there is no room.
func (s *GramSolver) appendChol(t int) bool {
	k, p := s.k, len(s.order)
	if p >= k {
		return false
	}
	row := s.l[p*k : p*k+p+1]
	// Solve L l = G_{P,t}.
	var ss float64
	for i, j := range s.order {
		v := s.g[j*k+t]
		li := s.l[i*k : i*k+i]
		for q, lq := range li {
			v -= lq * row[q]
		}
		v /= s.l[i*k+i]
		row[i] = v
		ss += v * v
	}
	d := s.g[t*k+t] - ss
	if !(d > gramDropTol*s.g[t*k+t]) {
		return false
	}
	row[p] = math.Sqrt(d)
	s.order = append(s.order, t)
	return true
}

// refactor recomputes the Cholesky factor for the current passive columns.
// Removing columns can only raise the remaining pivots, but if rounding
// makes one fail the test anyway that column leaves the passive set.
func (s *GramSolver) refactor() {
	cols := s.order
	s.order = s.order[:0]
	for _, j := range cols {
		// cols aliases s.order; appendChol writes s.order[len] which is
		// at or before the position being read, so reading ahead is safe.
		if !s.appendChol(j) {
			s.x[j] = 0
			s.passive[j] = false
		}
	}
}

// solvePassive solves G_PP s = c_P with the current factor, by position in
// s.sp.
func (s *GramSolver) solvePassive(c []float64) {
	k, p := s.k, len(s.order)
	for i, j := range s.order {
		v := c[j]
		li := s.l[i*k : i*k+i]
		for q, lq := range li {
			v -= lq * s.y[q]
		}
		s.y[i] = v / s.l[i*k+i]
	}
	for i := p - 1; i >= 0; i-- {
		v := s.y[i]
		for q := i + 1; q < p; q++ {
			v -= s.l[q*k+i] * s.sp[q]
		}
		s.sp[i] = v / s.l[i*k+i]
	}
}
