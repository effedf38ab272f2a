package lsq

import (
	"math"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// DependentColumn returns the index of the first column of a that is a
// combination of the columns before it to working precision, or -1. It is
// the one rank test of the project: OLS, the fit's base-column check
// (model.Design.CheckBase) and the backtest's fixed-column check all use
// it. A matrix with fewer rows than columns has no rank to spare: its
// first column beyond the row count is reported.
func DependentColumn(a mat.Matrix) int {
	m, n := a.Dims()
	if m < n {
		return m
	}
	var qr mat.QR
	qr.Factorize(a)
	var r mat.Dense
	qr.RTo(&r)
	return firstDependent(&r, a)
}

// firstDependent applies the rank test to the R factor of a's Householder
// QR: column j is dependent when |R_jj| <= rankTol(m, n)·‖a_j‖ (the sine of
// the angle between a_j and the span of the columns before it is below
// the tolerance; a zero column always is).
func firstDependent(r *mat.Dense, a mat.Matrix) int {
	m, n := a.Dims()
	tol := rankTol(m, n)
	for j := range n {
		if math.Abs(r.At(j, j)) <= tol*floats.Norm(mat.Col(nil, j, a), 2) {
			return j
		}
	}
	return -1
}
