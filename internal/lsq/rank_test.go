package lsq

import (
	"testing"

	"gonum.org/v1/gonum/mat"
)

// DependentColumn on matrices whose rank is known by construction: an
// exact combination (c3 = c1 + c2, worked by hand), a zero column, a
// constant column beside the intercept, a near-combination perturbed by
// 1e-6 of its norm (independent: far above 10·max(m, n)·ε ≈ 1.3e-14 here),
// and more columns than rows.
func TestDependentColumn(t *testing.T) {
	cases := []struct {
		name string
		rows [][]float64
		want int
	}{
		{"independent", [][]float64{{1, 1, 0}, {1, 2, 1}, {1, 3, 0}, {1, 4, 5}, {1, 5, 2}, {1, 6, 1}}, -1},
		{"c3 = c1 + c2", [][]float64{{1, 1, 2}, {1, 2, 3}, {1, 3, 4}, {1, 4, 5}, {1, 5, 6}, {1, 6, 7}}, 2},
		{"zero column", [][]float64{{1, 0, 1}, {1, 0, 2}, {1, 0, 3}, {1, 0, 5}}, 1},
		{"constant beside the intercept", [][]float64{{1, 3}, {1, 3}, {1, 3}, {1, 3}}, 1},
		{"near combination", [][]float64{{1, 1, 2}, {1, 2, 3 + 1e-5}, {1, 3, 4}, {1, 4, 5}, {1, 5, 6}, {1, 6, 7}}, -1},
		{"more columns than rows", [][]float64{{1, 2, 3}, {4, 5, 7}}, 2},
	}
	for _, c := range cases {
		a := mat.NewDense(len(c.rows), len(c.rows[0]), nil)
		for i, r := range c.rows {
			a.SetRow(i, r)
		}
		if got := DependentColumn(a); got != c.want {
			t.Errorf("%s: column %d, want %d", c.name, got, c.want)
		}
	}
}
