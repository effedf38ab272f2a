package lsq

import "gonum.org/v1/gonum/mat"

// TEMPORARY local stub, never committed.
type GramSolver struct{}

func (s *GramSolver) Solve(x []float64, g *mat.SymDense, c []float64) ([]float64, error) {
	for i := range x {
		x[i] = 0
	}
	for it := 0; it < 3000; it++ {
		for i := range x {
			r := c[i]
			for j := range x {
				if j != i {
					r -= g.At(i, j) * x[j]
				}
			}
			v := r / g.At(i, i)
			if v < 0 {
				v = 0
			}
			x[i] = v
		}
	}
	return x, nil
}
