package lsq

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"pgregory.net/rapid"
)

// The Karush–Kuhn–Tucker conditions characterise the minimiser of the convex
// problem min ½‖A x − b‖² subject to x_j ≥ 0 (j bounded), x_j free
// otherwise (Lawson & Hanson 1974, ch. 23, Theorem 23.4; any convex
// optimisation text). With gradient ∇ = Aᵀ(A x − b):
//
//	bounded j: x_j ≥ 0, ∇_j ≥ 0, and ∇_j = 0 where x_j > 0
//	free j:    ∇_j = 0
//
// The properties below check them to a tolerance proportional to the size
// of the terms in ∇_j, 1e-9·‖a_j‖·(‖b‖ + Σ_i ‖a_i‖·|x_i|).

// drawProblem draws a small design. Integer entries in [−3, 3] make exact
// dependence, zero columns and ties common; a duplicated column is forced
// now and then. Real entries of magnitude below flush are set to zero.
func drawProblem(t *rapid.T, flush float64) (*mat.Dense, []float64) {
	m := rapid.IntRange(1, 14).Draw(t, "m")
	n := rapid.IntRange(1, 7).Draw(t, "n")
	ints := rapid.Bool().Draw(t, "ints")
	entry := func(label string) float64 {
		if ints {
			return float64(rapid.IntRange(-3, 3).Draw(t, label))
		}
		v := rapid.Float64Range(-1, 1).Draw(t, label)
		if math.Abs(v) < flush {
			return 0
		}
		return v
	}
	a := mat.NewDense(m, n, nil)
	for i := 0; i < m; i++ {
		for j := 0; j < n; j++ {
			a.Set(i, j, entry("a"))
		}
	}
	if n > 1 && rapid.IntRange(0, 3).Draw(t, "dup") == 0 {
		src := rapid.IntRange(0, n-1).Draw(t, "src")
		dst := rapid.IntRange(0, n-1).Draw(t, "dst")
		for i := 0; i < m; i++ {
			a.Set(i, dst, a.At(i, src))
		}
	}
	b := make([]float64, m)
	for i := range b {
		b[i] = 3 * entry("b")
	}
	return a, b
}

// checkKKT also checks rnorm (unless NaN) against ‖A x − b‖, to 1e-12 of
// the same scale. slack widens the test ∇_j ≥ 0 for zero x_j by
// slack·‖a_j‖·‖r‖.
func checkKKT(t *rapid.T, a *mat.Dense, b, x []float64, nonneg []bool, rnorm, slack float64) {
	m, n := a.Dims()
	var r mat.VecDense
	r.MulVec(a, mat.NewVecDense(n, x))
	r.SubVec(&r, mat.NewVecDense(m, b))
	var grad mat.VecDense
	grad.MulVec(a.T(), &r)
	colNorm := make([]float64, n)
	sum := mat.Norm(mat.NewVecDense(m, b), 2)
	for j := 0; j < n; j++ {
		colNorm[j] = mat.Norm(a.ColView(j), 2)
		sum += colNorm[j] * math.Abs(x[j])
	}
	if want := mat.Norm(&r, 2); !math.IsNaN(rnorm) && math.Abs(rnorm-want) > 1e-12*sum {
		t.Fatalf("rnorm = %g, ‖A x − b‖ = %g", rnorm, want)
	}
	for j := 0; j < n; j++ {
		if math.IsNaN(x[j]) {
			t.Fatalf("x[%d] is NaN", j)
		}
		tol := 1e-9 * colNorm[j] * sum
		g := grad.AtVec(j)
		switch {
		case nonneg[j] && x[j] < 0:
			t.Fatalf("x[%d] = %g < 0", j, x[j])
		case nonneg[j] && x[j] == 0:
			if g < -tol-slack*colNorm[j]*mat.Norm(&r, 2) {
				t.Fatalf("x[%d] = 0 but gradient %g < 0 (tol %g); x = %v", j, g, tol, x)
			}
		default:
			if math.Abs(g) > tol {
				t.Fatalf("x[%d] = %g but gradient %g ≠ 0 (tol %g); x = %v", j, x[j], g, tol, x)
			}
		}
	}
}

func allTrue(n int) []bool {
	v := make([]bool, n)
	for j := range v {
		v[j] = true
	}
	return v
}

func TestNNLSKKT(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		a, b := drawProblem(t, 0)
		x, rnorm, err := NNLS(a, b)
		if err != nil {
			t.Fatal(err)
		}
		checkKKT(t, a, b, x, allTrue(len(x)), rnorm, 0)
	})
}

func TestNNLSGramKKT(t *testing.T) {
	var s GramSolver // reused across cases of different k, as the fit does
	rapid.Check(t, func(t *rapid.T) {
		// The caller's AᵀA cannot hold squares that underflow; keep the
		// entries where it can.
		a, b := drawProblem(t, 1e-30)
		g, c := gram(a, b)
		x, err := s.Solve(nil, g, c)
		if err != nil {
			t.Fatal(err)
		}
		// A column within sinθ ≈ 1e-5 of the passive span is dropped by
		// design (GramSolver doc), so ∇_j ≥ 0 holds to 1e-5·‖a_j‖·‖r‖ there.
		checkKKT(t, a, b, x, allTrue(len(x)), math.NaN(), 1e-5)
	})
}

func TestBoundedLSKKT(t *testing.T) {
	var s BoundedSolver
	rapid.Check(t, func(t *rapid.T) {
		a, b := drawProblem(t, 0)
		m, n := a.Dims()
		nonneg := make([]bool, n)
		var free []int
		for j := range nonneg {
			nonneg[j] = rapid.Bool().Draw(t, "nonneg")
			if !nonneg[j] {
				free = append(free, j)
			}
		}
		x, rnorm, err := s.Solve(nil, a, b, nonneg)
		if errors.Is(err, ErrRankDeficient) {
			// Must agree with the singular values of the free columns.
			if len(free) > m {
				return
			}
			af := mat.NewDense(m, len(free), nil)
			for k, j := range free {
				af.SetCol(k, mat.Col(nil, j, a))
			}
			var svd mat.SVD
			if !svd.Factorize(af, mat.SVDNone) {
				t.Fatal("SVD failed")
			}
			sv := svd.Values(nil)
			if sv[len(sv)-1] > 1e-8*sv[0] {
				t.Fatalf("ErrRankDeficient for free columns with singular values %v", sv)
			}
			return
		}
		if err != nil {
			t.Fatal(err)
		}
		checkKKT(t, a, b, x, nonneg, rnorm, 0)
	})
}
