package lsq

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// NNLS solves
//
//	minimise ‖A x − b‖₂ subject to x ≥ 0
//
// by the Lawson–Hanson active-set method, each passive subproblem solved by
// Householder QR. It returns x and the residual norm ‖A x − b‖₂. A may have
// dependent columns and fewer rows than columns; x is then one of the
// minimisers (A x is unique). It allocates; use a BoundedSolver to reuse
// storage across calls.
func NNLS(a *mat.Dense, b []float64) (x []float64, rnorm float64, err error) {
	_, n := a.Dims()
	nonneg := make([]bool, n)
	for j := range nonneg {
		nonneg[j] = true
	}
	var s BoundedSolver
	return s.Solve(nil, a, b, nonneg)
}

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
// returns x and ‖A x − b‖₂. It allocates; use a BoundedSolver to reuse
// storage across calls.
func BoundedLS(a *mat.Dense, b []float64, nonneg []bool) (x []float64, rnorm float64, err error) {
	var s BoundedSolver
	return s.Solve(nil, a, b, nonneg)
}

// BoundedSolver solves the problem of BoundedLS, keeping its workspace so
// repeated solves of one shape do not allocate. The zero value is ready to
// use. A BoundedSolver must not be used by several goroutines at once.
type BoundedSolver struct {
	w     []float64 // m×(n+1) row-major: [free | nonneg | b], then its QR
	tau   []float64
	work  []float64
	perm  []int
	norms []float64 // column norms of w before the QR
	xp    []float64 // solution in permuted order
	as    activeSet
}

// Solve solves the BoundedLS problem into x (len n, or nil to allocate) and
// returns it with the residual norm. len(b) must be the number of rows of a
// and len(nonneg) its number of columns.
func (s *BoundedSolver) Solve(x []float64, a *mat.Dense, b []float64, nonneg []bool) ([]float64, float64, error) {
	m, n := a.Dims()
	if len(b) != m {
		panic("lsq: len(b) != rows of a")
	}
	if len(nonneg) != n {
		panic("lsq: len(nonneg) != columns of a")
	}
	if x == nil {
		x = make([]float64, n)
	} else if len(x) != n {
		panic("lsq: len(x) != columns of a")
	}

	// Free columns first, then the non-negative ones, then b.
	s.perm = s.perm[:0]
	for j, nn := range nonneg {
		if !nn {
			s.perm = append(s.perm, j)
		}
	}
	nf := len(s.perm)
	for j, nn := range nonneg {
		if nn {
			s.perm = append(s.perm, j)
		}
	}
	ld := n + 1
	s.w = grow(s.w, m*ld)
	s.norms = grow(s.norms, ld)
	clear(s.norms)
	raw := a.RawMatrix()
	for i := 0; i < m; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+n]
		dst := s.w[i*ld : (i+1)*ld]
		for k, j := range s.perm {
			v := row[j]
			dst[k] = v
			s.norms[k] += v * v
		}
		dst[n] = b[i]
		s.norms[n] += b[i] * b[i]
	}
	for k := range s.norms {
		ss := s.norms[k]
		if math.IsNaN(ss) || math.IsInf(ss, 0) || ss < 0x1p-900 {
			// Non-finite data, or a sum of squares that over- or
			// underflowed: find out which by scanning the column.
			for i := 0; i < m; i++ {
				if v := s.w[i*ld+k]; math.IsNaN(v) || math.IsInf(v, 0) {
					if k == n {
						return x, math.NaN(), fmt.Errorf("%w: b[%d] = %v", ErrNotFinite, i, v)
					}
					return x, math.NaN(), fmt.Errorf("%w: a[%d,%d] = %v", ErrNotFinite, i, s.perm[k], v)
				}
			}
			s.norms[k] = stridedNorm(s.w[k:], m, ld)
			continue
		}
		s.norms[k] = math.Sqrt(ss)
	}

	kq := min(m, ld)
	s.tau = grow(s.tau, kq)
	s.work = grow(s.work, ld)
	// With lwork = n+1 Dgeqrf runs the unblocked Householder QR (Dgeqr2),
	// which is what these narrow matrices want.
	lapack64.Geqrf(blas64.General{Rows: m, Cols: ld, Stride: ld, Data: s.w}, s.tau, s.work, ld)

	tolR := rankTol(m, n)
	for k := 0; k < nf; k++ {
		if k >= m || math.Abs(s.w[k*ld+k]) <= tolR*s.norms[k] {
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
				dst[ib] = s.w[row*ld+col]
			} else {
				dst[ib] = 0 // below the diagonal Dgeqrf keeps reflectors
			}
		}
		as.colScale[jb] = s.norms[col]
	}
	for ib := 0; ib < rows; ib++ {
		as.z[ib] = s.w[(nf+ib)*ld+n]
	}
	as.zScale = s.norms[n]
	as.tolW = dualTol(m, n)
	as.tolR = tolR
	rnorm, err := as.solve()

	s.xp = grow(s.xp, n)
	copy(s.xp[nf:], as.x[:nb])
	for k := nf - 1; k >= 0; k-- {
		rk := s.w[k*ld : k*ld+ld]
		v := rk[n]
		for l := k + 1; l < n; l++ {
			v -= rk[l] * s.xp[l]
		}
		s.xp[k] = v / rk[k]
	}
	for k, j := range s.perm {
		x[j] = s.xp[k]
	}
	return x, rnorm, err
}

// stridedNorm is norm2 of v[0], v[ld], ..., v[(m-1)·ld].
func stridedNorm(v []float64, m, ld int) float64 {
	var scale, ssq float64 = 0, 1
	for i := 0; i < m; i++ {
		x := v[i*ld]
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
