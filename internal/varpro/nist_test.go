package varpro

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// The NIST Statistical Reference Datasets for nonlinear regression
// (https://www.itl.nist.gov/div898/strd/nls/nls_main.shtml), copied into
// testdata/ with their certified values; tolerances from the reference
// README (parameters and RSS relative to the certified values).

type nistSet struct {
	X         []float64 `json:"x"`
	Y         []float64 `json:"y"`
	Start1    []float64 `json:"start1"`
	Start2    []float64 `json:"start2"`
	Certified []float64 `json:"certified_values"`
	CertSD    []float64 `json:"certified_std_dev"`
	RSS       float64   `json:"certified_residual_sum_of_squares"`
}

func loadNIST(t testing.TB, name string) nistSet {
	t.Helper()
	b, err := os.ReadFile("testdata/nist_" + name + ".json")
	if err != nil {
		t.Fatal(err)
	}
	var s nistSet
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	if len(s.X) == 0 || len(s.X) != len(s.Y) {
		t.Fatalf("%s: bad reference data", name)
	}
	return s
}

// separable describes how a NIST model splits into linear coefficients and
// nonlinear parameters, and how to map (coef, theta) back to b1..bk.
type separable struct {
	name    string
	linIdx  []int // positions of the linear coefficients among b
	nlIdx   []int // positions of the nonlinear parameters among b
	problem func(s nistSet) *Problem
	// tolerances: parameters, standard deviations, RSS (relative)
	tolB, tolSD, tolRSS float64
}

func inf(n int) (lo, hi []float64) {
	lo, hi = make([]float64, n), make([]float64, n)
	for i := range lo {
		lo[i], hi[i] = math.Inf(-1), math.Inf(1)
	}
	return
}

var nistCases = []separable{
	{
		// y = b1 (1 − exp(−b2 x))
		name: "misra1a", linIdx: []int{0}, nlIdx: []int{1}, tolB: 1e-6, tolSD: 1e-5, tolRSS: 1e-8,
		problem: func(s nistSet) *Problem {
			lo, hi := inf(1)
			return &Problem{Y: s.Y, NumVarying: 1, Lower: lo, Upper: hi,
				Columns: func(th []float64, cols [][]float64) {
					for i, x := range s.X {
						cols[0][i] = 1 - math.Exp(-th[0]*x)
					}
				},
				Deriv: func(th, c []float64, d [][]float64) {
					for i, x := range s.X {
						d[0][i] = c[0] * x * math.Exp(-th[0]*x)
					}
				}}
		},
	},
	{
		// y = b1 e^(−b2 x) + b3 e^(−b4 x) + b5 e^(−b6 x)
		name: "lanczos3", linIdx: []int{0, 2, 4}, nlIdx: []int{1, 3, 5}, tolB: 1e-4, tolSD: 1e-3, tolRSS: 1e-6,
		problem: func(s nistSet) *Problem {
			lo, hi := inf(3)
			return &Problem{Y: s.Y, NumVarying: 3, Lower: lo, Upper: hi,
				Columns: func(th []float64, cols [][]float64) {
					for l := range 3 {
						for i, x := range s.X {
							cols[l][i] = math.Exp(-th[l] * x)
						}
					}
				},
				Deriv: func(th, c []float64, d [][]float64) {
					for l := range 3 {
						for i, x := range s.X {
							d[l][i] = -c[l] * x * math.Exp(-th[l]*x)
						}
					}
				}}
		},
	},
	{
		// y = (b1 + b2 x + b3 x² + b4 x³) / (1 + b5 x + b6 x² + b7 x³)
		name: "thurber", linIdx: []int{0, 1, 2, 3}, nlIdx: []int{4, 5, 6}, tolB: 1e-5, tolSD: 1e-4, tolRSS: 1e-8,
		problem: func(s nistSet) *Problem {
			lo, hi := inf(3)
			den := func(th []float64, x float64) float64 { return 1 + th[0]*x + th[1]*x*x + th[2]*x*x*x }
			return &Problem{Y: s.Y, NumVarying: 4, Lower: lo, Upper: hi,
				Columns: func(th []float64, cols [][]float64) {
					for i, x := range s.X {
						dn := den(th, x)
						p := 1.0
						for l := range 4 {
							cols[l][i] = p / dn
							p *= x
						}
					}
				},
				Deriv: func(th, c []float64, d [][]float64) {
					for i, x := range s.X {
						dn := den(th, x)
						num := c[0] + c[1]*x + c[2]*x*x + c[3]*x*x*x
						f := -num / (dn * dn)
						d[0][i] = f * x
						d[1][i] = f * x * x
						d[2][i] = f * x * x * x
					}
				}}
		},
	},
	{
		// y = b1 (x² + x b2) / (x² + x b3 + b4): b1 linear, b2..b4 nonlinear.
		name: "mgh09", linIdx: []int{0}, nlIdx: []int{1, 2, 3}, tolB: 1e-5, tolSD: 1e-4, tolRSS: 1e-8,
		problem: func(s nistSet) *Problem {
			lo, hi := inf(3)
			return &Problem{Y: s.Y, NumVarying: 1, Lower: lo, Upper: hi,
				Columns: func(th []float64, cols [][]float64) {
					for i, x := range s.X {
						cols[0][i] = (x*x + x*th[0]) / (x*x + x*th[1] + th[2])
					}
				},
				Deriv: func(th, c []float64, d [][]float64) {
					for i, x := range s.X {
						num, dn := x*x+x*th[0], x*x+x*th[1]+th[2]
						d[0][i] = c[0] * x / dn
						d[1][i] = -c[0] * num * x / (dn * dn)
						d[2][i] = -c[0] * num / (dn * dn)
					}
				}}
		},
	},
}

func logRelErr(got, want float64) float64 {
	if got == want {
		return 16
	}
	return -math.Log10(math.Abs(got-want) / math.Abs(want))
}

func TestNISTNonlinear(t *testing.T) {
	for _, c := range nistCases {
		s := loadNIST(t, c.name)
		for si, start := range [][]float64{s.Start1, s.Start2} {
			p := c.problem(s)
			solver, err := NewSolver(p)
			if err != nil {
				t.Fatal(err)
			}
			th0 := make([]float64, len(c.nlIdx))
			for i, j := range c.nlIdx {
				th0[i] = start[j]
			}
			res, err := solver.Solve(th0, Settings{MaxEvaluations: 2000})
			if err != nil {
				t.Fatalf("%s start %d: %v", c.name, si+1, err)
			}
			b := make([]float64, len(s.Certified))
			for i, j := range c.linIdx {
				b[j] = res.Coef[i]
			}
			for i, j := range c.nlIdx {
				b[j] = res.Theta[i]
			}
			if c.name == "lanczos3" {
				sortExpTerms(b)
			}
			reached := math.Abs(res.RSS-s.RSS) <= c.tolRSS*s.RSS
			for j := range b {
				if math.Abs(b[j]-s.Certified[j]) > c.tolB*math.Abs(s.Certified[j]) {
					reached = false
				}
			}
			if res.Status != Converged {
				// A search that did not converge must say so and must not
				// be mistaken for the certified answer; that is the
				// acceptable outcome only for MGH09's hard first start.
				if c.name == "mgh09" && si == 0 {
					t.Logf("%s start 1: reported %v at RSS %.6g (acceptable: no false success)", c.name, res.Status, res.RSS)
					continue
				}
				t.Errorf("%s start %d: status %v, RSS %.10g (certified %.10g)", c.name, si+1, res.Status, res.RSS, s.RSS)
				continue
			}
			if !reached {
				t.Errorf("%s start %d: reported convergence but b = %v, RSS %.10g; certified %v, %.10g",
					c.name, si+1, b, res.RSS, s.Certified, s.RSS)
				continue
			}
			fse, cse, tse, err := solver.StdErrors(res)
			if err != nil {
				t.Fatal(err)
			}
			if len(fse) != 0 {
				t.Fatalf("%s: no fixed columns expected", c.name)
			}
			sd := make([]float64, len(b))
			for i, j := range c.linIdx {
				sd[j] = cse[i]
			}
			for i, j := range c.nlIdx {
				sd[j] = tse[i]
			}
			if c.name == "lanczos3" {
				// Permute the standard errors the same way as the terms.
				raw := make([]float64, len(b))
				for i, j := range c.linIdx {
					raw[j] = res.Coef[i]
				}
				for i, j := range c.nlIdx {
					raw[j] = res.Theta[i]
				}
				sd = permuteLike(raw, sd)
			}
			minB, minSD := 16.0, 16.0
			for j := range b {
				minB = math.Min(minB, logRelErr(b[j], s.Certified[j]))
				minSD = math.Min(minSD, logRelErr(sd[j], s.CertSD[j]))
				if math.Abs(sd[j]-s.CertSD[j]) > c.tolSD*s.CertSD[j] {
					t.Errorf("%s start %d: SD of b%d = %.10g, certified %.10g", c.name, si+1, j+1, sd[j], s.CertSD[j])
				}
			}
			t.Logf("%s start %d: %d evaluations; digits reached: parameters %.1f, SDs %.1f, RSS %.1f",
				c.name, si+1, res.Evaluations, minB, minSD, logRelErr(res.RSS, s.RSS))
		}
	}
}

// The three exponential terms of Lanczos3 are interchangeable; NIST lists
// them by increasing rate, so order (b1,b2), (b3,b4), (b5,b6) by rate.
func sortExpTerms(b []float64) {
	for i := 0; i < 3; i++ {
		for j := i + 1; j < 3; j++ {
			if b[2*j+1] < b[2*i+1] {
				b[2*i], b[2*j] = b[2*j], b[2*i]
				b[2*i+1], b[2*j+1] = b[2*j+1], b[2*i+1]
			}
		}
	}
}

func permuteLike(b, sd []float64) []float64 {
	bb := append([]float64(nil), b...)
	out := append([]float64(nil), sd...)
	for i := 0; i < 3; i++ {
		for j := i + 1; j < 3; j++ {
			if bb[2*j+1] < bb[2*i+1] {
				bb[2*i], bb[2*j] = bb[2*j], bb[2*i]
				bb[2*i+1], bb[2*j+1] = bb[2*j+1], bb[2*i+1]
				out[2*i], out[2*j] = out[2*j], out[2*i]
				out[2*i+1], out[2*j+1] = out[2*j+1], out[2*i+1]
			}
		}
	}
	return out
}
