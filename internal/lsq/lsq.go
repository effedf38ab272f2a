// Package lsq holds the linear least-squares kernels the model fit calls for
// every trial of its nonlinear parameters:
//
//   - OLS: min ‖A x − b‖ with standard errors, by Householder QR.
//   - NNLS: min ‖A x − b‖ subject to x ≥ 0 (Lawson–Hanson active set).
//   - NNLSGram / GramSolver: the same problem given only G = AᵀA and c = Aᵀb.
//   - BoundedLS / BoundedSolver: some coefficients free, the others ≥ 0.
//
// Everything that sees the design A works from an orthogonal factorization of
// it, never from the normal equations, so the accuracy is that of QR
// (condition number κ, not κ²). Only NNLSGram, which is handed AᵀA, uses
// Cholesky; use it when the columns are not close to collinear.
//
// Inputs are never modified. Slice-length mismatches are programmer mistakes
// and panic; non-finite data and unidentifiable free coefficients are
// returned as errors.
package lsq

import (
	"errors"
	"fmt"
	"math"
)

var (
	// ErrRankDeficient reports a design whose (free) columns are linearly
	// dependent to working precision, so the coefficients are not
	// identified.
	ErrRankDeficient = errors.New("lsq: rank-deficient design")
	// ErrNotFinite reports a NaN or infinity in the input.
	ErrNotFinite = errors.New("lsq: input not finite")
	// ErrNoConvergence reports that the active-set iteration hit its limit.
	// Lawson and Hanson prove finite termination in exact arithmetic; this
	// guards against cycling caused by rounding. The x returned with it is
	// feasible but not optimal.
	ErrNoConvergence = errors.New("lsq: active-set iteration limit reached")
)

const eps = 0x1p-52

// rankTol is the relative size below which a column's QR diagonal,
// |R_jj| / ‖a_j‖ (the sine of the angle between a_j and the span of the
// columns before it), counts as zero. Rounding in Householder QR leaves
// about √m·ε on an exactly dependent column; the factor 10·max(m, n) keeps
// that out and still accepts Longley (κ ≈ 5e9).
func rankTol(m, n int) float64 { return 10 * float64(max(m, n)) * eps }

// dualTol scales the test w_j > dualTol·‖a_j‖·‖b‖ that lets a column enter
// the passive set; w_j = a_jᵀ(b − A x) carries rounding of about that size.
func dualTol(m, n int) float64 { return 10 * float64(max(m, n)) * eps }

// maxIter bounds the outer (column-adding) iterations of the active-set
// methods; SciPy's nnls uses 3n. Typical problems need about n.
func maxIter(n int) int { return 5*n + 10 }

func checkFinite(name string, v []float64) error {
	for i, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return fmt.Errorf("%w: %s[%d] = %v", ErrNotFinite, name, i, x)
		}
	}
	return nil
}
