package lsq

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// nistLinear is a NIST StRD linear-regression file as stored in testdata/
// (copied from the project's reference set; each file names its source).
type nistLinear struct {
	Dataset    string
	Parameters []string
	Coef       []float64 `json:"certified_values"`
	SD         []float64 `json:"certified_std_dev"`
	ResidualSD float64   `json:"certified_residual_std_dev"`
	R2         float64   `json:"certified_r_squared"`
	Anova      struct {
		Residual struct {
			DF  int     `json:"df"`
			RSS float64 `json:"sum_of_squares"`
		} `json:"residual"`
	} `json:"certified_anova"`
	Y []float64

	a *mat.Dense // constant column, then the x columns in order
}

func loadNIST(t testing.TB, file string, xs ...string) nistLinear {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("testdata", file))
	if err != nil {
		t.Fatal(err)
	}
	var d nistLinear
	if err := json.Unmarshal(raw, &d); err != nil {
		t.Fatal(err)
	}
	var cols map[string]json.RawMessage
	if err := json.Unmarshal(raw, &cols); err != nil {
		t.Fatal(err)
	}
	d.a = mat.NewDense(len(d.Y), 1+len(xs), nil)
	for i := range d.Y {
		d.a.Set(i, 0, 1)
	}
	for k, name := range xs {
		var col []float64
		if err := json.Unmarshal(cols[name], &col); err != nil || len(col) != len(d.Y) {
			t.Fatalf("%s: column %s: %v", file, name, err)
		}
		d.a.SetCol(1+k, col)
	}
	return d
}

// lre is the log relative error, −log10(|got − want| / |want|), capped at 15
// as in the NIST verification of the reference set (McCullough 1999).
func lre(got, want float64) float64 {
	if got == want {
		return 15
	}
	return min(15, -math.Log10(math.Abs(got-want)/math.Abs(want)))
}

func minLRE(got, want []float64) float64 {
	v := 15.0
	for i := range want {
		v = min(v, lre(got[i], want[i]))
	}
	return v
}

// TestOLSNIST checks OLS against the certified values of NIST StRD linear
// regression (https://www.itl.nist.gov/div898/strd/lls/lls.shtml), at the
// tolerances NIST's StRD certificates support: Longley coefficients, SDs and
// residual SD rel 1e-9, Norris rel 1e-10, R² abs 1e-12 for both.
func TestOLSNIST(t *testing.T) {
	cases := []struct {
		file string
		xs   []string
		rel  float64
	}{
		{"nist_norris.json", []string{"x"}, 1e-10},
		{"nist_longley.json", []string{"x1", "x2", "x3", "x4", "x5", "x6"}, 1e-9},
	}
	for _, tc := range cases {
		d := loadNIST(t, tc.file, tc.xs...)
		t.Run(d.Dataset, func(t *testing.T) {
			res, err := OLS(d.a, d.Y, true)
			if err != nil {
				t.Fatal(err)
			}
			for j, name := range d.Parameters {
				if e := math.Abs(res.Coef[j]-d.Coef[j]) / math.Abs(d.Coef[j]); e > tc.rel {
					t.Errorf("%s = %.15g, NIST certifies %.15g (rel err %.2g > %g)", name, res.Coef[j], d.Coef[j], e, tc.rel)
				}
				if e := math.Abs(res.StdErr[j]-d.SD[j]) / d.SD[j]; e > tc.rel {
					t.Errorf("SD(%s) = %.15g, NIST certifies %.15g (rel err %.2g > %g)", name, res.StdErr[j], d.SD[j], e, tc.rel)
				}
			}
			if e := math.Abs(res.ResidualSD-d.ResidualSD) / d.ResidualSD; e > tc.rel {
				t.Errorf("residual SD = %.15g, NIST certifies %.15g (rel err %.2g)", res.ResidualSD, d.ResidualSD, e)
			}
			if e := math.Abs(res.R2 - d.R2); e > 1e-12 {
				t.Errorf("R² = %.15g, NIST certifies %.15g (abs err %.2g > 1e-12)", res.R2, d.R2, e)
			}
			if res.DF != d.Anova.Residual.DF {
				t.Errorf("DF = %d, NIST ANOVA residual df %d", res.DF, d.Anova.Residual.DF)
			}
			if e := math.Abs(res.RSS-d.Anova.Residual.RSS) / d.Anova.Residual.RSS; e > tc.rel {
				t.Errorf("RSS = %.15g, NIST ANOVA residual SS %.15g (rel err %.2g)", res.RSS, d.Anova.Residual.RSS, e)
			}
			t.Logf("LRE: coefficients %.2f, SDs %.2f, residual SD %.2f, R² %.2f",
				minLRE(res.Coef, d.Coef), minLRE(res.StdErr, d.SD), lre(res.ResidualSD, d.ResidualSD), lre(res.R2, d.R2))
		})
	}
}

// TestOLSUncentredR2 checks the uncentred R², 1 − RSS/Σy² (the definition
// used for models without a constant, e.g. statsmodels' rsquared for a
// model with no constant), built from NIST's certified Longley residual sum
// of squares and the data; abs 1e-12.
func TestOLSUncentredR2(t *testing.T) {
	d := loadNIST(t, "nist_longley.json", "x1", "x2", "x3", "x4", "x5", "x6")
	res, err := OLS(d.a, d.Y, false)
	if err != nil {
		t.Fatal(err)
	}
	var yy float64
	for _, y := range d.Y {
		yy += y * y
	}
	want := 1 - d.Anova.Residual.RSS/yy
	if math.Abs(res.R2-want) > 1e-12 {
		t.Errorf("uncentred R² = %.15g, want %.15g", res.R2, want)
	}
}

// TestBoundedLSFreeNIST runs BoundedLS with every coefficient free (its own
// QR path, not mat.QR) on the NIST sets; the certified coefficients must hold
// at the OLS tolerances, and the residual norm must be √(certified RSS).
func TestBoundedLSFreeNIST(t *testing.T) {
	cases := []struct {
		file string
		xs   []string
		rel  float64
	}{
		{"nist_norris.json", []string{"x"}, 1e-10},
		{"nist_longley.json", []string{"x1", "x2", "x3", "x4", "x5", "x6"}, 1e-9},
	}
	for _, tc := range cases {
		d := loadNIST(t, tc.file, tc.xs...)
		t.Run(d.Dataset, func(t *testing.T) {
			_, n := d.a.Dims()
			x, rnorm, err := BoundedLS(d.a, d.Y, make([]bool, n))
			if err != nil {
				t.Fatal(err)
			}
			for j, name := range d.Parameters {
				if e := math.Abs(x[j]-d.Coef[j]) / math.Abs(d.Coef[j]); e > tc.rel {
					t.Errorf("%s = %.15g, NIST certifies %.15g (rel err %.2g)", name, x[j], d.Coef[j], e)
				}
			}
			want := math.Sqrt(d.Anova.Residual.RSS)
			if e := math.Abs(rnorm-want) / want; e > tc.rel {
				t.Errorf("rnorm = %.15g, √RSS = %.15g (rel err %.2g)", rnorm, want, e)
			}
			t.Logf("LRE: coefficients %.2f, rnorm %.2f", minLRE(x, d.Coef), lre(rnorm, want))
		})
	}
}

// TestOLSRankDeficient builds designs that are singular by construction
// (linear algebra, no source needed): a duplicated column, a column that is
// the sum of two others, more columns than rows, a zero column.
func TestOLSRankDeficient(t *testing.T) {
	d := loadNIST(t, "nist_longley.json", "x1", "x2", "x3", "x4", "x5", "x6")
	m, n := d.a.Dims()
	with := func(f func(i int) float64) *mat.Dense {
		a := mat.NewDense(m, n+1, nil)
		a.Slice(0, m, 0, n).(*mat.Dense).Copy(d.a)
		for i := 0; i < m; i++ {
			a.Set(i, n, f(i))
		}
		return a
	}
	cases := []struct {
		name string
		a    *mat.Dense
		b    []float64
	}{
		{"duplicate", with(func(i int) float64 { return d.a.At(i, 3) }), d.Y},
		{"sum", with(func(i int) float64 { return d.a.At(i, 1) + d.a.At(i, 2) }), d.Y},
		{"zero", with(func(int) float64 { return 0 }), d.Y},
		{"wide", mat.NewDense(2, 3, []float64{1, 2, 3, 4, 5, 6}), []float64{1, 2}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := OLS(tc.a, tc.b, true); !errors.Is(err, ErrRankDeficient) {
				t.Errorf("OLS: err = %v, want ErrRankDeficient", err)
			}
			_, c := tc.a.Dims()
			if _, _, err := BoundedLS(tc.a, tc.b, make([]bool, c)); !errors.Is(err, ErrRankDeficient) {
				t.Errorf("BoundedLS all free: err = %v, want ErrRankDeficient", err)
			}
		})
	}
}

func TestNotFinite(t *testing.T) {
	a := mat.NewDense(3, 2, []float64{1, 0, 0, 1, 1, math.NaN()})
	b := []float64{1, 2, 3}
	if _, err := OLS(a, b, false); !errors.Is(err, ErrNotFinite) {
		t.Errorf("OLS: err = %v", err)
	}
	if _, _, err := NNLS(a, b); !errors.Is(err, ErrNotFinite) {
		t.Errorf("NNLS: err = %v", err)
	}
	a.Set(2, 1, 1)
	b[1] = math.Inf(1)
	if _, _, err := BoundedLS(a, b, []bool{false, true}); !errors.Is(err, ErrNotFinite) {
		t.Errorf("BoundedLS: err = %v", err)
	}
	g := mat.NewSymDense(2, []float64{1, 0, 0, math.NaN()})
	if _, err := NNLSGram(nil, g, []float64{1, 1}); !errors.Is(err, ErrNotFinite) {
		t.Errorf("NNLSGram: err = %v", err)
	}
}

// TestOLSExactlyDetermined fits the line through the first two Norris
// points: slope and intercept are the two-point formulas, RSS is zero and,
// with no residual degrees of freedom, the standard errors are undefined
// (NaN).
func TestOLSExactlyDetermined(t *testing.T) {
	d := loadNIST(t, "nist_norris.json", "x")
	a := d.a.Slice(0, 2, 0, 2).(*mat.Dense)
	x1, x2, y1, y2 := a.At(0, 1), a.At(1, 1), d.Y[0], d.Y[1]
	slope := (y2 - y1) / (x2 - x1)
	res, err := OLS(a, d.Y[:2], true)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(res.Coef[1]-slope) > 1e-14*math.Abs(slope) || math.Abs(res.Coef[0]-(y1-slope*x1)) > 1e-12 {
		t.Errorf("coef = %v, want (%g, %g)", res.Coef, y1-slope*x1, slope)
	}
	if res.DF != 0 || res.RSS > 1e-24 || !math.IsNaN(res.ResidualSD) || !math.IsNaN(res.StdErr[0]) {
		t.Errorf("DF %d, RSS %g, ResidualSD %g, StdErr %v", res.DF, res.RSS, res.ResidualSD, res.StdErr)
	}
}
