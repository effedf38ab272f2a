package gate

import (
	"math"
	"slices"
	"testing"

	"pgregory.net/rapid"

	"sluice/internal/sample"
	"sluice/policies"
)

// pieces is a test probe that passes where slack(t) = f(t) >= 0, for f with
// known zeros, and counts the probes.
type pieces struct {
	f      func(float64) float64
	probes int
}

func (p *pieces) probe(t float64, _ bool) (bool, float64) {
	p.probes++
	s := p.f(t)
	return s >= 0, s
}

func TestLargestPassing(t *testing.T) {
	const tol = 1e-4
	cases := []struct {
		name string
		top  float64
		f    func(float64) float64
		want float64 // the largest zero (last pass→fail crossing), computed by hand
	}{
		{"linear", 1, func(x float64) float64 { return 0.37 - x }, 0.37},
		{"all pass", 1, func(x float64) float64 { return 1 }, 1},
		{"passes at top only after failing inside", 1, func(x float64) float64 { return math.Abs(x-0.5) - 0.2 }, 1},
		// Two pass regions [0, 0.3] and [0.55, 0.72]: the larger one counts.
		{"two regions", 1, func(x float64) float64 { return min(0.72-x, max(0.3-x, x-0.55)) }, 0.72},
		{"curved", 1, func(x float64) float64 { return 1 - math.Exp(8*(x-0.613)) }, 0.613},
		{"steep near zero", 1, func(x float64) float64 { return 3e-4 - x }, 3e-4},
		{"nothing passes", 1, func(x float64) float64 { return -1 - x }, 0},
		{"top below one", 0.4, func(x float64) float64 { return 0.25 - x*x }, 0.4},
		{"step function", 1, func(x float64) float64 { return math.Floor(10*(0.4444-x)) + 0.5 }, 0.4444},
	}
	for _, c := range cases {
		p := &pieces{f: c.f}
		got, fail := largestPassing(c.top, DefaultGridSteps, tol, p.probe)
		if c.want == c.top {
			if got != c.top || fail >= 0 {
				t.Errorf("%s: got %v (fail %v), want the top %v", c.name, got, fail, c.top)
			}
			continue
		}
		if got > c.want+1e-12 || fail <= c.want-1e-12 || fail-got > tol {
			t.Errorf("%s: bracket [%v, %v], want width <= %v around %v", c.name, got, fail, tol, c.want)
		}
		if got > 0 && c.f(got) < 0 || c.f(fail) >= 0 {
			t.Errorf("%s: ends do not pass/fail: f(%v)=%v f(%v)=%v", c.name, got, c.f(got), fail, c.f(fail))
		}
		// Bisection from a grid bracket needs log2(0.1/1e-4) = 10 probes; the
		// search must not take more than twice that beyond the grid.
		if p.probes > DefaultGridSteps+1+20 {
			t.Errorf("%s: %d probes", c.name, p.probes)
		}
		t.Logf("%s: %d probes", c.name, p.probes)
	}
}

// An early stop must be a certain failure: whatever the unseen draws are,
// the full sample breaks a limit (the definitions in internal/sample decide).
func TestCertainFailIsCertain(t *testing.T) {
	stops := 0
	rapid.Check(t, func(t *rapid.T) {
		n := rapid.IntRange(20, 300).Draw(t, "n")
		seenN := rapid.IntRange(1, n-1).Draw(t, "seen")
		gen := rapid.Float64Range(-10, 10)
		x := make([]float64, n)
		for i := range x {
			x[i] = gen.Draw(t, "x")
		}
		lim := policies.Risk{
			MaxLossProbability: rapid.Float64Range(0.01, 0.99).Draw(t, "loss"),
			DownsideLevel:      rapid.Float64Range(0.01, 0.49).Draw(t, "dl"),
			CVaRLevel:          rapid.Float64Range(0.01, 0.5).Draw(t, "cl"),
		}
		df := rapid.Float64Range(-10, 10).Draw(t, "df")
		cf := rapid.Float64Range(-10, 10).Draw(t, "cf")
		if !certainFail(x[:seenN], n, lim, df, true, cf, true) {
			return
		}
		stops++
		s := sample.Sorted(x)
		broke := sample.ShareBelow(x, 0) > lim.MaxLossProbability ||
			sample.Quantile(s, lim.DownsideLevel, sample.Default) < df ||
			sample.LowerCVaR(x, lim.CVaRLevel) < cf
		if !broke {
			t.Fatalf("early failure on %d of %d draws, but all %v pass", seenN, n, x)
		}
		// And so for the worst case of the unseen draws: all of them huge.
		y := slices.Clone(x)
		for i := seenN; i < n; i++ {
			y[i] = 1e6
		}
		s = sample.Sorted(y)
		if !(sample.ShareBelow(y, 0) > lim.MaxLossProbability ||
			sample.Quantile(s, lim.DownsideLevel, sample.Default) < df ||
			sample.LowerCVaR(y, lim.CVaRLevel) < cf) {
			t.Fatalf("early failure on %d of %d draws, but the best completion passes", seenN, n)
		}
	})
	if stops < 10 {
		t.Fatalf("only %d of the generated cases stopped early; the test checks too little", stops)
	}
	t.Logf("%d early stops checked", stops)
}
