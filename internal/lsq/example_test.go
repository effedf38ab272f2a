package lsq_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"
	"sluice/internal/lsq"
)

// The Lawson–Hanson example of the reference set (testdata/nnls_example.json;
// SciPy 1.10.1 optimize.nnls gives x = (1.34121622, 0, 0, 1.09121622),
// residual norm 4.19297998): the unconstrained fit has two negative
// coefficients, NNLS holds them at zero.
func ExampleNNLS() {
	a := mat.NewDense(10, 4, []float64{
		1, 2, 0, 3,
		2, 1, 1, 0,
		0, 3, 2, 1,
		4, 0, 1, 2,
		1, 1, 3, 0,
		3, 2, 0, 1,
		0, 1, 4, 2,
		2, 3, 1, 1,
		1, 0, 2, 4,
		3, 1, 1, 3,
	})
	b := []float64{4, 1, 2, 9, -1, 5, 0, 3, 6, 8}
	x, rnorm, err := lsq.NNLS(a, b)
	if err != nil {
		panic(err)
	}
	fmt.Printf("x = %.8f\nresidual norm = %.8f\n", x, rnorm)
	// Output:
	// x = [1.34121622 0.00000000 0.00000000 1.09121622]
	// residual norm = 4.19297998
}

// A model-shaped problem: the intercept is free, the two media
// coefficients must not be negative. The unconstrained fit (BoundedLS with
// nothing bounded) gives the second channel a negative coefficient. SciPy
// 1.10.1 agrees: numpy lstsq (1.01179884, 2.95938104, −0.72147002) and
// lsq_linear(bounds=([−inf, 0, 0], inf), method='bvls') (0.51836066,
// 3.13442623, 0).
func ExampleBoundedLS() {
	a := mat.NewDense(6, 3, []float64{
		1, 0.1, 0.5,
		1, 0.4, 0.4,
		1, 0.2, 0.9,
		1, 0.8, 0.3,
		1, 0.5, 0.7,
		1, 0.9, 0.6,
	})
	b := []float64{1.0, 1.9, 0.9, 3.1, 2.0, 3.3}
	free, _, _ := lsq.BoundedLS(a, b, []bool{false, false, false})
	x, _, err := lsq.BoundedLS(a, b, []bool{false, true, true})
	if err != nil {
		panic(err)
	}
	fmt.Printf("unconstrained %.6f\nbounded       %.6f\n", free, x)
	// Output:
	// unconstrained [1.011799 2.959381 -0.721470]
	// bounded       [0.518361 3.134426 0.000000]
}
