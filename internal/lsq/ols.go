package lsq

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// OLSResult is an ordinary least-squares fit.
type OLSResult struct {
	Coef   []float64 // x minimising ‖A x − b‖₂
	StdErr []float64 // √(s² [(AᵀA)⁻¹]_jj); NaN when DF = 0
	// ResidualSD is s = √(RSS/DF); NaN when DF = 0.
	ResidualSD float64
	RSS        float64 // ‖b − A x‖₂²
	// R2 is 1 − RSS/TSS with TSS = Σ(b_i − b̄)² when the fit has an
	// intercept and TSS = Σ b_i² (uncentred) when it does not.
	R2 float64
	DF int // residual degrees of freedom, rows − columns
}

// OLS solves min ‖A x − b‖₂ by Householder QR of A (gonum mat.QR), never by
// the normal equations, and reports standard errors from R⁻¹:
// (AᵀA)⁻¹ = R⁻¹R⁻ᵀ, so the j-th standard error is s times the norm of row j
// of R⁻¹.
//
// intercept says that A already holds a constant column (OLS adds none); it
// selects the centred R². A with fewer rows than columns, or a column that
// is a combination of the columns before it to working precision, gives
// ErrRankDeficient.
func OLS(a *mat.Dense, b []float64, intercept bool) (OLSResult, error) {
	m, n := a.Dims()
	if len(b) != m {
		panic("lsq: len(b) != rows of a")
	}
	if err := checkFinite("b", b); err != nil {
		return OLSResult{}, err
	}
	for i := 0; i < m; i++ {
		for j, v := range a.RawRowView(i) {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return OLSResult{}, fmt.Errorf("%w: a[%d,%d] = %v", ErrNotFinite, i, j, v)
			}
		}
	}
	if m < n {
		return OLSResult{}, fmt.Errorf("%w: %d rows for %d columns", ErrRankDeficient, m, n)
	}

	var qr mat.QR
	qr.Factorize(a)
	var r mat.Dense
	qr.RTo(&r)
	if j := firstDependent(&r, a); j >= 0 {
		return OLSResult{}, fmt.Errorf("%w: column %d is a combination of the columns before it", ErrRankDeficient, j)
	}

	var coef mat.VecDense
	// SolveVecTo also reports a Condition error past κ ≈ 1e16 of the raw
	// columns; the scale-free rank test above has already decided, and QR
	// solutions do not depend on column scaling, so that error is ignored.
	_ = qr.SolveVecTo(&coef, false, mat.NewVecDense(m, b))

	res := OLSResult{Coef: make([]float64, n), StdErr: make([]float64, n), DF: m - n}
	copy(res.Coef, coef.RawVector().Data)
	var resid mat.VecDense
	resid.MulVec(a, &coef)
	var rss, mean, tss float64
	for i, bi := range b {
		d := bi - resid.AtVec(i)
		rss += d * d
		mean += bi
	}
	mean /= float64(m)
	for _, bi := range b {
		if intercept {
			tss += (bi - mean) * (bi - mean)
		} else {
			tss += bi * bi
		}
	}
	res.RSS = rss
	res.R2 = 1 - rss/tss
	res.ResidualSD = math.NaN()
	if res.DF > 0 {
		res.ResidualSD = math.Sqrt(rss / float64(res.DF))
	}

	rt := mat.NewTriDense(n, mat.Upper, nil)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			rt.SetTri(i, j, r.At(i, j))
		}
	}
	var rinv mat.TriDense
	// As above, a Condition error here is a warning about raw column
	// scaling; the rank test has excluded a singular R.
	_ = rinv.InverseTri(rt)
	for j := 0; j < n; j++ {
		var ss float64
		for l := j; l < n; l++ {
			v := rinv.At(j, l)
			ss += v * v
		}
		res.StdErr[j] = res.ResidualSD * math.Sqrt(ss)
	}
	return res, nil
}
