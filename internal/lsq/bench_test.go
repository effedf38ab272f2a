package lsq

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// benchDesign is a model-shaped design: 156 weeks, nf free base columns
// (constant, trend, Fourier pairs at period 52.18) and nb media-like columns
// in (0, 1), with a KPI in which a third of the media coefficients would be
// negative unconstrained. Seeded PCG(7, nf·100+nb).
func benchDesign(nf, nb int) (*mat.Dense, []float64) {
	const m = 156
	r := rand.New(rand.NewPCG(7, uint64(nf*100+nb)))
	a := mat.NewDense(m, nf+nb, nil)
	b := make([]float64, m)
	for i := 0; i < m; i++ {
		t := float64(i)
		season := math.Sin(2 * math.Pi * t / 52.18)
		for j := 0; j < nf; j++ {
			switch {
			case j == 0:
				a.Set(i, j, 1)
			case j == 1:
				a.Set(i, j, t/m)
			default:
				h := float64(j/2) * 2 * math.Pi * t / 52.18
				if j%2 == 0 {
					a.Set(i, j, math.Sin(h))
				} else {
					a.Set(i, j, math.Cos(h))
				}
			}
		}
		b[i] = 10 + 0.8*season + 0.3*r.NormFloat64()
		for k := 0; k < nb; k++ {
			s := math.Max(0, 1+0.6*season+0.5*r.NormFloat64())
			v := s / (s + 0.3*float64(k+1))
			a.Set(i, nf+k, v)
			beta := 2.0
			if k%3 == 2 {
				beta = -0.5
			}
			b[i] += beta * v
		}
	}
	return a, b
}

func BenchmarkNNLSGram(b *testing.B) {
	for _, k := range []int{6, 12} {
		b.Run(fmt.Sprintf("k=%d", k), func(b *testing.B) {
			a, y := benchDesign(0, k)
			g, c := gram(a, y)
			s := NewGramSolver(k)
			x := make([]float64, k)
			b.ReportAllocs()
			for b.Loop() {
				if _, err := s.Solve(x, g, c); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func BenchmarkBoundedLS(b *testing.B) {
	a, y := benchDesign(6, 6)
	nonneg := []bool{false, false, false, false, false, false, true, true, true, true, true, true}
	b.Run("156x(6+6)/func", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, _, err := BoundedLS(a, y, nonneg); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("156x(6+6)/solver", func(b *testing.B) {
		var s BoundedSolver
		x := make([]float64, 12)
		b.ReportAllocs()
		for b.Loop() {
			if _, _, err := s.Solve(x, a, y, nonneg); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// BenchmarkQRSolve is the yardstick: an unconstrained least-squares solve
// of the same 156×12 design with gonum's mat.QR.
func BenchmarkQRSolve(b *testing.B) {
	a, y := benchDesign(6, 6)
	yv := mat.NewVecDense(len(y), y)
	var x mat.VecDense
	b.Run("156x12", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			var qr mat.QR
			qr.Factorize(a)
			if err := qr.SolveVecTo(&x, false, yv); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func BenchmarkNNLS(b *testing.B) {
	a, y := benchDesign(0, 12)
	b.Run("156x12", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, _, err := NNLS(a, y); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func BenchmarkOLS(b *testing.B) {
	a, y := benchDesign(6, 6)
	b.Run("156x12", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, err := OLS(a, y, true); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// TestHotPathNoAlloc holds the solvers to the brief's contract that the
// fit's inner loop does not allocate once the workspace is sized.
func TestHotPathNoAlloc(t *testing.T) {
	a, y := benchDesign(6, 6)
	nonneg := []bool{false, false, false, false, false, false, true, true, true, true, true, true}
	var bs BoundedSolver
	x := make([]float64, 12)
	if n := testing.AllocsPerRun(50, func() { bs.Solve(x, a, y, nonneg) }); n != 0 {
		t.Errorf("BoundedSolver.Solve: %v allocations per call", n)
	}
	var gs GramSolver
	g, c := gram(a, y)
	if n := testing.AllocsPerRun(50, func() { gs.Solve(x, g, c) }); n != 0 {
		t.Errorf("GramSolver.Solve: %v allocations per call", n)
	}
}
