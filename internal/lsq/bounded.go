package lsq

import (
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// NNLS solves
//
//	minimise ‖A x − b‖₂ subject to x ≥ 0
//
// by the Lawson–Hanson active-set method, each passive subproblem solved by
// Householder QR. It returns x and the residual norm ‖A x − b‖₂. A may have
// dependent columns and fewer rows than columns; x is then one of the
// minimisers (A x is unique). It allocates x; a BoundedSolver also reuses x.
func NNLS(a *mat.Dense, b []float64) (x []float64, rnorm float64, err error) {
	s := boundedPool.Get().(*BoundedSolver)
	defer boundedPool.Put(s)
	return s.solve(nil, a, b, nil, true)
}

// boundedPool holds workspaces for NNLS and BoundedLS, so that the
// convenience functions allocate only the x they return.
var boundedPool = sync.Pool{New: func() any { return new(BoundedSolver) }}

// BoundedLS solves
//
//	minimise ‖A x − b‖₂ subject to x_j ≥ 0 for every j with nonneg[j]
//
// leaving the other coefficients free. It is exact, not a penalty: one
// Householder QR of [A_free A_nonneg b] projects the free columns out, NNLS
// (Lawson–Hanson) runs on the projected non-negative block, which the same
// QR has already reduced to at most n+1 rows, and the free coefficients
// follow by back substitution. The free columns must have full column rank
// (else ErrRankDeficient); the non-negative ones may be dependent. It
// returns x and ‖A x − b‖₂. It allocates x; a BoundedSolver also reuses x.
func BoundedLS(a *mat.Dense, b []float64, nonneg []bool) (x []float64, rnorm float64, err error) {
	if _, n := a.Dims(); len(nonneg) != n {
		panic("lsq: len(nonneg) != columns of a")
	}
	s := boundedPool.Get().(*BoundedSolver)
	defer boundedPool.Put(s)
	return s.solve(nil, a, b, nonneg, false)
}

// BoundedSolver solves the problem of BoundedLS, keeping its workspace so
// repeated solves of one shape do not allocate. The zero value is ready to
// use. A BoundedSolver must not be used by several goroutines at once.
type BoundedSolver struct {
	w     []float64 // m×(n+1) column-major: [free | nonneg | b], then its R
	perm  []int
	norms []float64 // column norms of w before the QR
	xp    []float64 // solution in permuted order
	as    activeSet
}

// Solve solves the BoundedLS problem into x (len n, or nil to allocate) and
// returns it with the residual norm. len(b) must be the number of rows of a
// and len(nonneg) its number of columns.
func (s *BoundedSolver) Solve(x []float64, a *mat.Dense, b []float64, nonneg []bool) ([]float64, float64, error) {
	if _, n := a.Dims(); len(nonneg) != n {
		panic("lsq: len(nonneg) != columns of a")
	}
	return s.solve(x, a, b, nonneg, false)
}

// solve is Solve; allNonneg stands for a nonneg that is all true.
func (s *BoundedSolver) solve(x []float64, a *mat.Dense, b []float64, nonneg []bool, allNonneg bool) ([]float64, float64, error) {
	m, n := a.Dims()
	if len(b) != m {
		panic("lsq: len(b) != rows of a")
	}
	if x == nil {
		x = make([]float64, n)
	} else if len(x) != n {
		panic("lsq: len(x) != columns of a")
	}

	// Free columns first, then the non-negative ones, then b.
	s.perm = s.perm[:0]
	if !allNonneg {
		for j, nn := range nonneg {
			if !nn {
				s.perm = append(s.perm, j)
			}
		}
	}
	nf := len(s.perm)
	for j := 0; j < n; j++ {
		if allNonneg || nonneg[j] {
			s.perm = append(s.perm, j)
		}
	}
	ld := n + 1
	s.w = grow(s.w, m*ld)
	raw := a.RawMatrix()
	for i := 0; i < m; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+n]
		for k, j := range s.perm {
			s.w[k*m+i] = row[j]
		}
		s.w[n*m+i] = b[i]
	}
	s.norms = grow(s.norms, ld)
	for k := 0; k < ld; k++ {
		col := s.w[k*m : (k+1)*m]
		nrm := fastNorm(col)
		if math.IsNaN(nrm) || math.IsInf(nrm, 0) {
			for i, v := range col {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					if k == n {
						return x, math.NaN(), fmt.Errorf("%w: b[%d] = %v", ErrNotFinite, i, v)
					}
					return x, math.NaN(), fmt.Errorf("%w: a[%d,%d] = %v", ErrNotFinite, i, s.perm[k], v)
				}
			}
		}
		s.norms[k] = nrm
	}

	// Householder QR of the whole block, column by column; R overwrites
	// the upper triangle (the diagonal holds β), reflectors are discarded.
	kq := min(m, ld)
	for k := 0; k < kq; k++ {
		v := s.w[k*m+k : (k+1)*m]
		beta, tau, ok := householder(v)
		if ok {
			for l := k + 1; l < ld; l++ {
				y := s.w[l*m+k : (l+1)*m]
				d := tau * floats.Dot(v, y)
				floats.AddScaled(y, -d, v)
			}
		}
		v[0] = beta
	}

	tolR := rankTol(m, n)
	for k := 0; k < nf; k++ {
		if k >= m || math.Abs(s.w[k*m+k]) <= tolR*s.norms[k] {
			return x, math.NaN(), fmt.Errorf("%w: free column %d is a combination of the free columns before it", ErrRankDeficient, s.perm[k])
		}
	}

	// The non-negative block of R (rows nf.., columns nf..n-1) with the
	// transformed b beside it is an equivalent NNLS problem: the rows
	// below it are zero and the residual entry of b (row n) is included.
	nb := n - nf
	rows := max(0, kq-nf)
	as := &s.as
	as.reset(rows, nb)
	for jb := 0; jb < nb; jb++ {
		col := nf + jb
		dst := as.m[jb*rows : (jb+1)*rows]
		for ib := range dst {
			row := nf + ib
			if row <= col {
				dst[ib] = s.w[col*m+row]
			} else {
				dst[ib] = 0 // below the diagonal are the reflectors
			}
		}
		as.colScale[jb] = s.norms[col]
	}
	for ib := 0; ib < rows; ib++ {
		as.z[ib] = s.w[n*m+nf+ib]
	}
	as.zScale = s.norms[n]
	as.tolW = dualTol(m, n)
	as.tolR = tolR
	rnorm, err := as.solve()

	s.xp = grow(s.xp, n)
	copy(s.xp[nf:], as.x[:nb])
	for k := nf - 1; k >= 0; k-- {
		v := s.w[n*m+k]
		for l := k + 1; l < n; l++ {
			v -= s.w[l*m+k] * s.xp[l]
		}
		s.xp[k] = v / s.w[k*m+k]
	}
	for k, j := range s.perm {
		x[j] = s.xp[k]
	}
	return x, rnorm, err
}

// fastNorm is the Euclidean norm by a plain sum of squares, falling back to
// the scaled norm2 when that sum over- or underflows. It is NaN or ±Inf for
// non-finite input.
func fastNorm(v []float64) float64 {
	var ss float64
	for _, x := range v {
		ss += x * x
	}
	if ss > 0x1p-900 && ss < 0x1p900 {
		return math.Sqrt(ss)
	}
	if math.IsNaN(ss) {
		return ss
	}
	return norm2(v)
}
