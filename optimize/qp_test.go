package optimize

import (
	"math"
	"math/rand/v2"
	"testing"
)

func denseRows(a [][]float64, b []float64) []row {
	rows := make([]row, len(a))
	for i := range a {
		rows[i] = row{a: a[i], b: b[i]}
	}
	return rows
}

func TestQPTextbook(t *testing.T) {
	cases := []struct {
		name string
		G    []float64
		a    []float64
		A    [][]float64
		b    []float64
		neq  int
		want []float64
		tol  float64
	}{
		// Nocedal & Wright (2006), Numerical Optimization, 2nd ed., Example
		// 16.2: equality-constrained QP with x* = (2, −1, 1) (from memory;
		// re-derived from its KKT system with numpy when writing the test).
		{"N&W 16.2", []float64{6, 2, 1, 2, 5, 2, 1, 2, 4}, []float64{-8, -3, -3},
			[][]float64{{1, 0, 1}, {0, 1, 1}}, []float64{3, 0}, 2, []float64{2, -1, 1}, 1e-12},
		// Nocedal & Wright (2006), Example 16.4: the active-set example,
		// min (x1−1)² + (x2−2.5)² under five inequalities, x* = (1.4, 1.7)
		// (from memory; SciPy 1.10.1 SLSQP agrees).
		{"N&W 16.4", []float64{2, 0, 0, 2}, []float64{-2, -5},
			[][]float64{{1, -2}, {-1, -2}, {-1, 2}, {1, 0}, {0, 1}}, []float64{-2, -6, -2, 0, 0}, 0, []float64{1.4, 1.7}, 1e-12},
		// The example of R's quadprog::solve.QP (Turlach & Weingessel; the
		// Goldfarb–Idnani method): D = I, d = (0, 5, 0), A'x >= (−8, 2, 0),
		// solution (10/21, 22/21, 44/21) = (0.4761905, 1.0476190, 2.0952381)
		// (from memory; SciPy 1.10.1 SLSQP agrees).
		{"quadprog", []float64{1, 0, 0, 0, 1, 0, 0, 0, 1}, []float64{0, -5, 0},
			[][]float64{{-4, -3, 0}, {2, 1, 0}, {0, -2, 1}}, []float64{-8, 2, 0}, 0, []float64{10.0 / 21, 22.0 / 21, 44.0 / 21}, 1e-12},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := qp{n: len(c.a), G: c.G, a: c.a, rows: denseRows(c.A, c.b), neq: c.neq}
			z, conflict, err := p.solve(nil)
			if err != nil || conflict != nil {
				t.Fatalf("solve: %v, conflict %v", err, conflict)
			}
			for i := range z {
				if math.Abs(z[i]-c.want[i]) > c.tol {
					t.Fatalf("z = %v, want %v", z, c.want)
				}
			}
		})
	}
}

func TestQPInfeasibleCertificate(t *testing.T) {
	// x1 + x2 >= 3 with x1 <= 1 and x2 <= 1: the three rows conflict; the
	// bound x1 >= 0 takes no part (common practice, no source: Farkas).
	A := [][]float64{{1, 0}, {-1, 0}, {0, -1}, {1, 1}}
	b := []float64{0, -1, -1, 3}
	p := qp{n: 2, G: []float64{1, 0, 0, 1}, a: []float64{0, 0}, rows: denseRows(A, b)}
	z, conflict, err := p.solve(nil)
	if err != nil || z != nil {
		t.Fatalf("got z %v, err %v; want a conflict", z, err)
	}
	got := map[int]bool{}
	for _, i := range conflict {
		got[i] = true
	}
	if len(conflict) != 3 || !got[1] || !got[2] || !got[3] {
		t.Fatalf("conflict rows %v, want {1, 2, 3}", conflict)
	}
}

// TestProjectBudgetBox checks the projection against its characterization
// (Held, Wolfe & Crowder 1974): w_k = clamp(x_k − μ, lo_k, hi_k) with
// Σ w_k = s, μ >= 0 when the budget is a ceiling and μ = 0 when it is slack,
// and against the active-set method on the same set.
func TestProjectBudgetBox(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for trial := range 500 {
		n := 1 + rng.IntN(12)
		x := make([]float64, n)
		lo := make([]float64, n)
		hi := make([]float64, n)
		var sLo, sHi float64
		for i := range n {
			x[i] = 100 * rng.NormFloat64()
			lo[i] = 20 * rng.Float64()
			hi[i] = lo[i] + 50*rng.Float64()
			if rng.IntN(5) == 0 {
				hi[i] = math.Inf(1)
			}
			if rng.IntN(7) == 0 {
				hi[i] = lo[i]
			}
			sLo += lo[i]
			sHi += min(hi[i], lo[i]+200)
		}
		s := sLo + rng.Float64()*(sHi-sLo)
		atMost := trial%3 == 0
		w, mu, ok := ProjectBudgetBox(nil, x, lo, hi, s, atMost)
		if !ok {
			t.Fatalf("trial %d: reported empty", trial)
		}
		var total float64
		for i := range n {
			total += w[i]
			if want := min(max(x[i]-mu, lo[i]), hi[i]); w[i] != want {
				t.Fatalf("trial %d: w[%d] = %v, clamp gives %v", trial, i, w[i], want)
			}
		}
		switch {
		case !atMost && math.Abs(total-s) > 1e-12*s:
			t.Fatalf("trial %d: sum %v, want %v (relative error %g)", trial, total, s, (total-s)/s)
		case atMost && (total > s*(1+1e-12) || mu < 0 || (mu > 0 && math.Abs(total-s) > 1e-12*s)):
			t.Fatalf("trial %d: ceiling %v, sum %v, mu %v", trial, s, total, mu)
		}
		// The Goldfarb–Idnani projection onto the same set agrees.
		var rows []row
		neq := 0
		ones := make([]float64, n)
		for i := range ones {
			ones[i] = 1
		}
		if atMost {
			neg := make([]float64, n)
			for i := range neg {
				neg[i] = -1
			}
			rows = append(rows, row{a: neg, b: -s})
		} else {
			rows = append(rows, row{a: ones, b: s})
			neq = 1
		}
		G := make([]float64, n*n)
		a := make([]float64, n)
		for i := range n {
			G[i*n+i] = 1
			a[i] = -x[i]
			e := make([]float64, n)
			e[i] = 1
			rows = append(rows, row{a: e, b: lo[i]})
			if !math.IsInf(hi[i], 1) {
				e := make([]float64, n)
				e[i] = -1
				rows = append(rows, row{a: e, b: -hi[i]})
			}
		}
		z, conflict, err := (&qp{n: n, G: G, a: a, rows: rows, neq: neq}).solve(nil)
		if err != nil || conflict != nil {
			t.Fatalf("trial %d: active set: %v %v", trial, err, conflict)
		}
		for i := range n {
			if math.Abs(z[i]-w[i]) > 1e-9*(1+math.Abs(w[i])) {
				t.Fatalf("trial %d: active set %v, bisection %v", trial, z, w)
			}
		}
	}
}

func TestProjectBudgetBoxEmpty(t *testing.T) {
	// Boxes summing to at most 3 cannot meet a budget of 4.
	if _, _, ok := ProjectBudgetBox(nil, []float64{0, 0}, []float64{0, 0}, []float64{1, 2}, 4, false); ok {
		t.Fatal("want empty")
	}
	// Lower bounds summing to 3 cannot stay under a ceiling of 2.
	if _, _, ok := ProjectBudgetBox(nil, []float64{0, 0}, []float64{1, 2}, []float64{5, 5}, 2, true); ok {
		t.Fatal("want empty")
	}
}
