package lsq

import (
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"
	"sluice/internal/refcheck"
)

// lawsonHanson is testdata/nnls_example.json: a 10×4 NNLS problem for the
// method of Lawson & Hanson (1974), Solving Least Squares Problems, ch. 23,
// whose solution (two constraints active) was computed with SciPy 1.10.1
// optimize.nnls and confirmed by optimize.lsq_linear(method='bvls') to 1e-12
// and by the KKT conditions (see the file's source key).
type lawsonHanson struct {
	A       [][]float64
	B       []float64
	LS      []float64 `json:"unconstrained_least_squares_x"`
	X       []float64 `json:"nnls_x"`
	Zeros   []int     `json:"active_set_zero_indices_0_based"`
	RNorm   float64   `json:"residual_norm"`
	WantKKT []float64 `json:"kkt_dual_w"`
}

func loadLawsonHanson(t testing.TB) (lawsonHanson, *mat.Dense) {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("testdata", "nnls_example.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ex lawsonHanson
	if err := json.Unmarshal(raw, &ex); err != nil {
		t.Fatal(err)
	}
	return ex, denseRows(ex.A)
}

func denseRows(rows [][]float64) *mat.Dense {
	a := mat.NewDense(len(rows), len(rows[0]), nil)
	for i, r := range rows {
		a.SetRow(i, r)
	}
	return a
}

func gram(a *mat.Dense, b []float64) (*mat.SymDense, []float64) {
	_, n := a.Dims()
	g := mat.NewSymDense(n, nil)
	g.SymOuterK(1, a.T())
	var c mat.VecDense
	c.MulVec(a.T(), mat.NewVecDense(len(b), b))
	return g, c.RawVector().Data
}

func residualNorm(a *mat.Dense, x, b []float64) float64 {
	var r mat.VecDense
	r.MulVec(a, mat.NewVecDense(len(x), x))
	r.SubVec(mat.NewVecDense(len(b), b), &r)
	return mat.Norm(&r, 2)
}

// TestNNLSLawsonHanson checks NNLS, NNLSGram and BoundedLS (all
// coefficients non-negative) on the Lawson–Hanson example: x and the
// residual norm abs 1e-10, the zero pattern exact (the reference file's
// tolerance). BoundedLS with every coefficient free must give the file's
// unconstrained least-squares solution (numpy lstsq), abs 1e-10.
func TestNNLSLawsonHanson(t *testing.T) {
	ex, a := loadLawsonHanson(t)
	n := len(ex.X)
	all := make([]bool, n)
	for j := range all {
		all[j] = true
	}
	check := func(t *testing.T, x []float64, rnorm float64) {
		t.Helper()
		zero := map[int]bool{}
		for _, j := range ex.Zeros {
			zero[j] = true
		}
		for j := range ex.X {
			if math.Abs(x[j]-ex.X[j]) > 1e-10 {
				t.Errorf("x[%d] = %.15g, want %.15g", j, x[j], ex.X[j])
			}
			if (x[j] == 0) != zero[j] {
				t.Errorf("x[%d] = %g: zero pattern differs from %v", j, x[j], ex.Zeros)
			}
		}
		if math.Abs(rnorm-ex.RNorm) > 1e-10 {
			t.Errorf("rnorm = %.15g, want %.15g", rnorm, ex.RNorm)
		}
	}
	t.Run("NNLS", func(t *testing.T) {
		x, rnorm, err := NNLS(a, ex.B)
		if err != nil {
			t.Fatal(err)
		}
		check(t, x, rnorm)
	})
	t.Run("NNLSGram", func(t *testing.T) {
		g, c := gram(a, ex.B)
		x, err := NNLSGram(nil, g, c)
		if err != nil {
			t.Fatal(err)
		}
		check(t, x, residualNorm(a, x, ex.B))
	})
	t.Run("BoundedLS", func(t *testing.T) {
		x, rnorm, err := BoundedLS(a, ex.B, all)
		if err != nil {
			t.Fatal(err)
		}
		check(t, x, rnorm)
	})
	t.Run("BoundedLSFree", func(t *testing.T) {
		x, _, err := BoundedLS(a, ex.B, make([]bool, n))
		if err != nil {
			t.Fatal(err)
		}
		for j := range ex.LS {
			if math.Abs(x[j]-ex.LS[j]) > 1e-10 {
				t.Errorf("x[%d] = %.15g, lstsq %.15g", j, x[j], ex.LS[j])
			}
		}
	})
}

// testProblem is a seeded NNLS / bounded problem for the SciPy cross-check.
type testProblem struct {
	Name   string      `json:"name"`
	A      [][]float64 `json:"a"`
	B      []float64   `json:"b"`
	Nonneg []bool      `json:"nonneg"` // nil: NNLS only
	// unique says the minimiser x is unique (A, or for BVLS the relevant
	// columns, has full column rank), so x itself can be compared; otherwise
	// only A x (the projection onto a convex set, always unique) and the
	// residual norm are.
	unique bool
	gram   bool // well enough conditioned to compare NNLSGram's x as well
}

// crossCheckProblems builds the fixed problem set. Every random stream is
// math/rand/v2 PCG seeded with (2024, i) for the i-th problem.
func crossCheckProblems() []testProblem {
	var ps []testProblem
	add := func(name string, m, n int, fill func(r *rand.Rand, a [][]float64, b []float64), nonneg []bool, unique, gramOK bool) {
		r := rand.New(rand.NewPCG(2024, uint64(len(ps))))
		a := make([][]float64, m)
		for i := range a {
			a[i] = make([]float64, n)
		}
		b := make([]float64, m)
		fill(r, a, b)
		ps = append(ps, testProblem{Name: name, A: a, B: b, Nonneg: nonneg, unique: unique, gram: gramOK})
	}
	normal := func(r *rand.Rand, a [][]float64) {
		for i := range a {
			for j := range a[i] {
				a[i][j] = r.NormFloat64()
			}
		}
	}
	// b = A β + σ ε with β of mixed sign, so some constraints are active.
	signal := func(r *rand.Rand, a [][]float64, b []float64, sigma float64) {
		n := len(a[0])
		beta := make([]float64, n)
		for j := range beta {
			beta[j] = r.NormFloat64()
		}
		for i := range a {
			for j, v := range a[i] {
				b[i] += v * beta[j]
			}
			b[i] += sigma * r.NormFloat64()
		}
	}
	random := func(sigma float64) func(r *rand.Rand, a [][]float64, b []float64) {
		return func(r *rand.Rand, a [][]float64, b []float64) {
			normal(r, a)
			signal(r, a, b, sigma)
		}
	}
	half := func(n, free int) []bool {
		nn := make([]bool, n)
		for j := free; j < n; j++ {
			nn[j] = true
		}
		return nn
	}
	add("tall-156x12", 156, 12, random(0.1), half(12, 6), true, true)
	add("tall-30x5", 30, 5, random(1), half(5, 2), true, true)
	add("square-8x8", 8, 8, random(0.5), half(8, 3), true, true)
	add("wide-6x10", 6, 10, random(0.5), nil, false, false)
	add("duplicate-column-60x8", 60, 8, func(r *rand.Rand, a [][]float64, b []float64) {
		normal(r, a)
		for i := range a {
			a[i][5] = a[i][2]
		}
		signal(r, a, b, 0.3)
	}, half(8, 2), false, false)
	add("sum-column-60x8", 60, 8, func(r *rand.Rand, a [][]float64, b []float64) {
		normal(r, a)
		for i := range a {
			a[i][7] = a[i][4] + a[i][6]
		}
		signal(r, a, b, 0.3)
	}, half(8, 3), false, false)
	add("near-collinear-80x6", 80, 6, func(r *rand.Rand, a [][]float64, b []float64) {
		normal(r, a)
		for i := range a {
			a[i][4] = a[i][1] + 1e-3*r.NormFloat64()
		}
		for i := range b {
			b[i] = 2*a[i][1] + a[i][4] + 0.5*a[i][0] - a[i][3] + 0.1*r.NormFloat64()
		}
	}, half(6, 2), true, true)
	// b = 1.5 a₀ + 0.7 a₁ − Σ_{j≥2} u_j a_j + noise with u > 0: all but
	// two constraints active.
	add("many-active-100x10", 100, 10, func(r *rand.Rand, a [][]float64, b []float64) {
		normal(r, a)
		for i := range a {
			b[i] = 1.5*a[i][0] + 0.7*a[i][1] + 0.05*r.NormFloat64()
			for j := 2; j < len(a[i]); j++ {
				b[i] -= a[i][j] * (0.5 + r.Float64())
			}
		}
	}, half(10, 1), true, true)
	// Monomials 1, t, ..., t⁶ on [0, 1] (κ ≈ 1e5 after the constant) fitted to
	// exp(−3t)·cos(4t): ill-conditioned, coefficients of both signs.
	add("polynomial-50x7", 50, 7, func(r *rand.Rand, a [][]float64, b []float64) {
		for i := range a {
			t := float64(i) / 49
			for j := range a[i] {
				a[i][j] = math.Pow(t, float64(j))
			}
			b[i] = math.Exp(-3*t)*math.Cos(4*t) + 1e-3*r.NormFloat64()
		}
	}, half(7, 5), true, false)
	// A ≥ 0, b ≤ 0: x = 0 is the solution (every w_j ≤ 0).
	add("all-active-40x6", 40, 6, func(r *rand.Rand, a [][]float64, b []float64) {
		for i := range a {
			for j := range a[i] {
				a[i][j] = r.Float64()
			}
			b[i] = -r.Float64()
		}
	}, nil, true, true)
	// Saturated-spend-like columns in (0, 1), correlated through a common
	// season, plus a constant, trend and one Fourier pair as free columns.
	add("model-156x10", 156, 10, func(r *rand.Rand, a [][]float64, b []float64) {
		for i := range a {
			t := float64(i)
			season := math.Sin(2 * math.Pi * t / 52.18)
			a[i][0] = 1
			a[i][1] = t / 156
			a[i][2] = season
			a[i][3] = math.Cos(2 * math.Pi * t / 52.18)
			for j := 4; j < 10; j++ {
				s := math.Max(0, 1+0.6*season+0.5*r.NormFloat64())
				a[i][j] = s / (s + 0.3*float64(j-3))
			}
			b[i] = 10 + 2*a[i][1] + 0.8*season + 3*a[i][4] + 1.5*a[i][6] - 0.7*a[i][8] + 0.2*r.NormFloat64()
		}
	}, half(10, 4), true, true)
	add("scaled-columns-40x6", 40, 6, func(r *rand.Rand, a [][]float64, b []float64) {
		normal(r, a)
		for i := range a {
			for j := range a[i] {
				a[i][j] *= math.Pow(10, float64(j-3))
			}
		}
		signal(r, a, b, 0.5)
	}, half(6, 2), true, false)
	add("zero-column-30x5", 30, 5, func(r *rand.Rand, a [][]float64, b []float64) {
		normal(r, a)
		for i := range a {
			a[i][2] = 0
		}
		signal(r, a, b, 0.5)
	}, nil, false, true)
	add("single-row-1x4", 1, 4, random(0), nil, false, false)
	return ps
}

// TestSciPyCrossCheck compares NNLS, NNLSGram and BoundedLS with SciPy
// (Debian python3-scipy; scipy.optimize.nnls, Lawson & Hanson's NNLS, and
// scipy.optimize.lsq_linear(method='bvls'), Stark & Parker 1995) on the
// seeded problem set: x abs 1e-8·max(1, ‖x‖∞) where the minimiser is
// unique, A x abs 1e-8·max(1, ‖b‖∞) always, and the residual norm abs
// 1e-10·max(1, ‖b‖).
func TestSciPyCrossCheck(t *testing.T) {
	ps := crossCheckProblems()
	in, err := json.Marshal(map[string]any{"problems": ps})
	if err != nil {
		t.Fatal(err)
	}
	out := refcheck.Python(t, []string{"scipy"}, filepath.Join("testdata", "scipy_nnls.py"), in)
	var ref struct {
		SciPy   string `json:"scipy"`
		Results []struct {
			Name       string    `json:"name"`
			NNLSX      []float64 `json:"nnls_x"`
			NNLSRNorm  float64   `json:"nnls_rnorm"`
			BVLSX      []float64 `json:"bvls_x"`
			BVLSStatus int       `json:"bvls_status"`
			BVLSRNorm  float64   `json:"bvls_rnorm"`
		} `json:"results"`
	}
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatalf("scipy output: %v\n%s", err, out)
	}
	if len(ref.Results) != len(ps) {
		t.Fatalf("scipy returned %d results for %d problems", len(ref.Results), len(ps))
	}
	t.Logf("reference: SciPy %s", ref.SciPy)
	for i, p := range ps {
		r := ref.Results[i]
		a := denseRows(p.A)
		bInf, bNorm := 0.0, 0.0
		for _, v := range p.B {
			bInf = max(bInf, math.Abs(v))
			bNorm += v * v
		}
		bNorm = math.Sqrt(bNorm)
		compare := func(t *testing.T, x, want []float64, rnorm, wantR float64, unique bool) {
			t.Helper()
			xInf := 0.0
			for _, v := range want {
				xInf = max(xInf, math.Abs(v))
			}
			var worst float64
			for j := range want {
				worst = max(worst, math.Abs(x[j]-want[j]))
			}
			if unique && worst > 1e-8*max(1, xInf) {
				t.Errorf("x differs from SciPy by %.3g (tol %.3g)\n got %v\nwant %v", worst, 1e-8*max(1, xInf), x, want)
			}
			var fit, fitRef mat.VecDense
			fit.MulVec(a, mat.NewVecDense(len(x), x))
			fitRef.MulVec(a, mat.NewVecDense(len(want), want))
			fit.SubVec(&fit, &fitRef)
			if d := mat.Norm(&fit, math.Inf(1)); d > 1e-8*max(1, bInf) {
				t.Errorf("A x differs from SciPy's by %.3g", d)
			}
			d := math.Abs(rnorm - wantR)
			if d > 1e-10*max(1, bNorm) {
				t.Errorf("rnorm = %.15g, SciPy %.15g (diff %.3g)", rnorm, wantR, d)
			}
			zeros := 0
			for _, v := range x {
				if v == 0 {
					zeros++
				}
			}
			t.Logf("%d of %d at zero; max |Δx| %.2g (unique: %v), |Δrnorm| %.2g", zeros, len(x), worst, unique, d)
		}
		t.Run(p.Name+"/NNLS", func(t *testing.T) {
			x, rnorm, err := NNLS(a, p.B)
			if err != nil {
				t.Fatal(err)
			}
			compare(t, x, r.NNLSX, rnorm, r.NNLSRNorm, p.unique)
		})
		t.Run(p.Name+"/NNLSGram", func(t *testing.T) {
			g, c := gram(a, p.B)
			x, err := NNLSGram(nil, g, c)
			if err != nil {
				t.Fatal(err)
			}
			compare(t, x, r.NNLSX, residualNorm(a, x, p.B), r.NNLSRNorm, p.unique && p.gram)
		})
		if p.Nonneg == nil {
			continue
		}
		t.Run(p.Name+"/BoundedLS", func(t *testing.T) {
			if r.BVLSStatus <= 0 {
				t.Fatalf("SciPy bvls did not converge (status %d)", r.BVLSStatus)
			}
			x, rnorm, err := BoundedLS(a, p.B, p.Nonneg)
			if err != nil {
				t.Fatal(err)
			}
			compare(t, x, r.BVLSX, rnorm, r.BVLSRNorm, p.unique)
		})
	}
}

func TestBoundedLSRankDeficientFree(t *testing.T) {
	// Free columns 0 and 2 equal (singular by construction); the
	// non-negative column 1 may be anything.
	a := mat.NewDense(4, 3, []float64{1, 2, 1, 1, 0, 1, 1, 5, 1, 1, 1, 1})
	b := []float64{1, 2, 3, 4}
	if _, _, err := BoundedLS(a, b, []bool{false, true, false}); !errors.Is(err, ErrRankDeficient) {
		t.Errorf("err = %v, want ErrRankDeficient", err)
	}
	// The same dependence among non-negative columns is allowed.
	if _, _, err := BoundedLS(a, b, []bool{true, false, true}); err != nil {
		t.Errorf("dependent non-negative columns: %v", err)
	}
}
