package model

import (
	"math"
	"math/big"
	"math/rand/v2"
	"testing"
)

// Closed forms (common practice, no source needed beyond the algebra):
// the geometric adstock of a constant spend x tends to x/(1−λ) (geometric
// series); the half-life of weight λ^t is ln 0.5 / ln λ; Hill at a = k is
// exactly one half.
func TestGeometricSteadyState(t *testing.T) {
	for _, lambda := range []float64{0, 0.3, 0.7, 0.9} {
		x := make([]float64, 400)
		for i := range x {
			x[i] = 250
		}
		a := Geometric(make([]float64, len(x)), x, lambda)
		want := 250 / (1 - lambda)
		if got := a[len(a)-1]; math.Abs(got-want) > 1e-9*want {
			t.Errorf("λ=%v: steady state %v, want %v", lambda, got, want)
		}
	}
}

func TestHalfLife(t *testing.T) {
	cases := []struct{ lambda, want float64 }{
		{0.5, 1}, {0.25, 0.5}, {math.Pow(0.5, 1.0/3), 3}, {0, 0},
	}
	for _, c := range cases {
		if got := HalfLife(c.lambda); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("HalfLife(%v) = %v, want %v", c.lambda, got, c.want)
		}
	}
}

func TestHillHalfAtK(t *testing.T) {
	for _, s := range []float64{0.5, 1, 2, 3.7} {
		if got := Hill(1234.5, 1234.5, s); got != 0.5 {
			t.Errorf("Hill(k,k,%v) = %v, want exactly 0.5", s, got)
		}
	}
}

// Derivatives against central finite differences.
func TestDerivatives(t *testing.T) {
	const h = 1e-6
	a, k, s := 3.0, 2.0, 1.7
	_, da, dk, ds := HillDerivs(a, k, s)
	fd := func(f func(float64) float64, x float64) float64 { return (f(x+h) - f(x-h)) / (2 * h) }
	check := func(name string, got, want float64) {
		if math.Abs(got-want) > 1e-6*math.Max(1, math.Abs(want)) {
			t.Errorf("%s: analytic %v, numeric %v", name, got, want)
		}
	}
	check("hill/a", da, fd(func(x float64) float64 { return Hill(x, k, s) }, a))
	check("hill/k", dk, fd(func(x float64) float64 { return Hill(a, x, s) }, k))
	check("hill/s", ds, fd(func(x float64) float64 { return Hill(a, k, x) }, s))
	_, ea, ek := ExponentialDerivs(a, k)
	check("exp/a", ea, fd(func(x float64) float64 { return Exponential(x, k) }, a))
	check("exp/k", ek, fd(func(x float64) float64 { return Exponential(a, x) }, k))

	x := []float64{5, 0, 3, 8, 1, 0, 0, 4, 2, 7}
	lambda := 0.6
	ad := Geometric(make([]float64, len(x)), x, lambda)
	d := GeometricDecayDeriv(make([]float64, len(x)), ad, lambda)
	up := Geometric(make([]float64, len(x)), x, lambda+h)
	dn := Geometric(make([]float64, len(x)), x, lambda-h)
	for i := range x {
		check("geometric/λ", d[i], (up[i]-dn[i])/(2*h))
	}
	peak := 1.4
	dl, dp := make([]float64, len(x)), make([]float64, len(x))
	Delayed(make([]float64, len(x)), dl, dp, x, lambda, peak, 6)
	lu := Delayed(make([]float64, len(x)), nil, nil, x, lambda+h, peak, 6)
	ld := Delayed(make([]float64, len(x)), nil, nil, x, lambda-h, peak, 6)
	pu := Delayed(make([]float64, len(x)), nil, nil, x, lambda, peak+h, 6)
	pd := Delayed(make([]float64, len(x)), nil, nil, x, lambda, peak-h, 6)
	for i := range x {
		check("delayed/λ", dl[i], (lu[i]-ld[i])/(2*h))
		check("delayed/θ", dp[i], (pu[i]-pd[i])/(2*h))
	}
}

// Support is the range of 4-week moving averages (worked by hand).
func TestSupport(t *testing.T) {
	d := &Design{Spend: [][]float64{{4, 8, 0, 4, 12, 0, 0, 0}}}
	lo, hi := d.Support()
	// windows: (4+8+0+4)/4=4, (8+0+4+12)/4=6, (0+4+12+0)/4=4, (4+12+0+0)/4=4, (12+0+0+0)/4=3
	if lo[0] != 3 || hi[0] != 6 {
		t.Fatalf("support [%v, %v], want [3, 6]", lo[0], hi[0])
	}
}

// A flighted channel: bursts of awkward decimal spends separated by long
// zero runs. Every window inside a zero run must give exactly 0 (a sum of
// zeros), never a round-off negative; the highest window is the burst's
// exact 4-week mean, summed by hand below. A running sum (s += x[t] - x[t-w])
// ends at about -1.8e-13 on this series.
func TestSupportFlighted(t *testing.T) {
	x := []float64{0.1, 1234.57, 98765.43, 0.3, 77.7, 0, 0, 0, 0, 0, 0, 0.7, 3333.33, 0.2, 0, 0, 0, 0, 0}
	d := &Design{Spend: [][]float64{x}}
	lo, hi := d.Support()
	if lo[0] != 0 {
		t.Fatalf("low support %v, want exactly 0 over an all-zero 4-week window", lo[0])
	}
	want := (1234.57 + 98765.43 + 0.3 + 77.7) / 4 // the largest window, by inspection
	if hi[0] != want {
		t.Fatalf("high support %v, want %v", hi[0], want)
	}
}

// Support against exact arithmetic: on seeded random flighted series
// (cents, runs of zeros), every window sum is computed exactly with
// math/big (rationals) and the lowest and highest rounded to float64 once;
// Support's float sums of at most four non-negative terms must lie within
// 4 ulps of them, and the low support must be >= 0 (exactly 0 when a window
// is all zeros).
func TestSupportExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 3))
	for trial := range 200 {
		n := 5 + rng.IntN(60)
		x := make([]float64, n)
		zeroRun := false
		for i := range x {
			if rng.Float64() < 0.2 {
				zeroRun = !zeroRun
			}
			if !zeroRun {
				x[i] = float64(rng.IntN(10_000_000)) / 100
			}
		}
		lo, hi := (&Design{Spend: [][]float64{x}}).Support()
		var minR, maxR *big.Rat
		for t0 := 0; t0+SupportWeeks <= n; t0++ {
			s := new(big.Rat)
			for _, v := range x[t0 : t0+SupportWeeks] {
				s.Add(s, new(big.Rat).SetFloat64(v))
			}
			s.Quo(s, big.NewRat(SupportWeeks, 1))
			if minR == nil || s.Cmp(minR) < 0 {
				minR = s
			}
			if maxR == nil || s.Cmp(maxR) > 0 {
				maxR = s
			}
		}
		wantLo, _ := minR.Float64()
		wantHi, _ := maxR.Float64()
		if lo[0] < 0 || (wantLo == 0 && lo[0] != 0) {
			t.Fatalf("trial %d: low support %v, exact %v", trial, lo[0], wantLo)
		}
		for _, c := range [][2]float64{{lo[0], wantLo}, {hi[0], wantHi}} {
			if math.Abs(c[0]-c[1]) > 4*ulp(c[1]) {
				t.Fatalf("trial %d: support %v, exact %v", trial, c[0], c[1])
			}
		}
	}
}

func ulp(x float64) float64 { return math.Nextafter(math.Abs(x), math.Inf(1)) - math.Abs(x) }
