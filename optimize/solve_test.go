package optimize

import (
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"testing"

	"sluice/internal/sample"
)

// twoExp is a two-channel exponential problem whose marginal values are
// known in closed form: with β̄ the mean β over draws, the money marginal
// ROI of channel k at weekly spend w is m·β̄_k/K_k·e^{−w/K_k}/H (the
// derivative of β(1 − e^{−w/K}), README.md "Marginal ROI").
func twoExp(t *testing.T) (Problem, []float64, []float64) {
	t.Helper()
	beta, K := []float64{900e3, 500e3}, []float64{30e3, 20e3}
	resp, mean := expDraws(5, 40, beta, K)
	p := Problem{Response: resp, Economics: Economics{Horizon: 13, Margin: 0.8, ValuePerKPI: 1.5},
		Constraints: Constraints{Horizon: 13, Budget: 13 * 40e3, Channels: []Limits{
			{Name: "a", Current: 15e3, Max: inf, MaxChange: inf},
			{Name: "b", Current: 25e3, Max: inf, MaxChange: inf}}}}
	return p, mean, K
}

func TestMarginalROIAndGain(t *testing.T) {
	p, mean, K := twoExp(t)
	r, err := Solve(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	m := p.Economics.Margin * p.Economics.ValuePerKPI
	for k, ch := range r.Channels {
		for _, c := range []struct{ w, got float64 }{{ch.Current, ch.MROICurrent}, {ch.Proposed, ch.MROIProposed}} {
			want := m * mean[k] / K[k] * math.Exp(-c.w/K[k]) / 13
			if math.Abs(c.got-want) > 1e-12*want {
				t.Errorf("%s: mROI at %v is %v, closed form %v", ch.Name, c.w, c.got, want)
			}
		}
		if ch.Change != ch.Proposed-ch.Current {
			t.Errorf("%s: change %v", ch.Name, ch.Change)
		}
	}
	// At the optimum both channels return the same (water-filling).
	if d := r.Channels[0].MROIProposed - r.Channels[1].MROIProposed; math.Abs(d) > 1e-7 {
		t.Errorf("marginal ROI differ by %v at the optimum", d)
	}
	// The gain of a move is value(w) − value(c) per draw (README.md): its
	// mean is the difference of the expected values.
	if d := r.ExpectedGain - (r.Value - r.ValueAtCurrent); math.Abs(d) > 1e-9*math.Abs(r.Value) {
		t.Errorf("expected gain %v, value change %v", r.ExpectedGain, r.Value-r.ValueAtCurrent)
	}
	if math.Abs(r.Spend-p.Constraints.Budget) > 1e-9*p.Constraints.Budget {
		t.Errorf("spend %v, budget %v", r.Spend, p.Constraints.Budget)
	}
}

// TestKKTDetectsSuboptimal moves budget off the optimum and checks the
// reported violation against the closed form: with two interior channels
// the best common multiplier is the mean of their marginal values, so the
// violation is half their difference (in net ROI, the marginal ROI minus 1).
func TestKKTDetectsSuboptimal(t *testing.T) {
	p, mean, K := twoExp(t)
	m := p.Economics.Margin * p.Economics.ValuePerKPI
	w := []float64{24e3, 16e3}
	f := newFeasible(&p.Constraints)
	ev := newEvaluator(p.Response, p.Economics, []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 17, 18, 19,
		20, 21, 22, 23, 24, 25, 26, 27, 28, 29, 30, 31, 32, 33, 34, 35, 36, 37, 38, 39}, 1, false)
	ev.run(w)
	grad := make([]float64, 2)
	ev.mean(grad)
	kkt := checkKKT(f, w, grad, 13, 1e-4)
	marg := func(k int) float64 { return m*mean[k]/K[k]*math.Exp(-w[k]/K[k])/13 - 1 }
	want := math.Abs(marg(0)-marg(1)) / 2
	if kkt.OK || math.Abs(kkt.MaxViolation-want) > 1e-6*want {
		t.Fatalf("KKT %+v, want a violation of %v", kkt, want)
	}
	if mu := (marg(0) + marg(1)) / 2; math.Abs(kkt.Multiplier-mu) > 1e-6*math.Abs(mu) {
		t.Errorf("multiplier %v, want %v", kkt.Multiplier, mu)
	}

	// A solve cut short says so.
	r, err := Solve(benchProblem(40, Objective{}), &Settings{MaxIterations: 1, ScreenDraws: -1})
	if err != nil {
		t.Fatal(err)
	}
	if r.Status != IterationLimit || r.KKT.OK || r.KKT.Detail[:11] != "not optimal" {
		t.Fatalf("status %v, KKT %+v", r.Status, r.KKT)
	}
}

func TestDeterministicAcrossWorkers(t *testing.T) {
	if testing.Short() {
		t.Skip("solves a 150-draw problem four times")
	}
	p := benchProblem(150, Objective{Kind: CVaR, Level: 0.1, Weight: 0.5})
	var first *Result
	for _, procs := range []int{1, 2} {
		old := runtime.GOMAXPROCS(procs)
		for _, workers := range []int{0, 3} {
			r, err := Solve(p, &Settings{Workers: workers, Seed: 42, ScreenDraws: 40})
			if err != nil {
				t.Fatal(err)
			}
			if first == nil {
				first = r
				continue
			}
			if !slices.Equal(r.Proposed, first.Proposed) || r.Value != first.Value || r.Surrogate != first.Surrogate {
				t.Fatalf("GOMAXPROCS %d, %d workers: %v (%v), first %v (%v)", procs, workers, r.Proposed, r.Value, first.Proposed, first.Value)
			}
		}
		runtime.GOMAXPROCS(old)
	}
	if first.Seed != 42 {
		t.Errorf("seed %d not recorded", first.Seed)
	}
}

// TestSmoothedObjectives checks the surrogates against the exact sample
// figures and their gradients against finite differences. The softplus
// bound x⁺ ≤ h·log(1 + e^{x/h}) ≤ x⁺ + h·log 2 puts the smoothed CVaR
// within h·log(2)/α above the exact one (elementary; Rockafellar & Uryasev
// 2000 for the auxiliary-variable form); the kernel quantile tends to the
// sample quantile as h → 0 (Sheather & Marron 1990).
func TestSmoothedObjectives(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	n := 250
	v := make([]float64, n)
	base := make([]float64, n)
	for d := range v {
		base[d] = 1e6 + 1e5*rng.NormFloat64()
		v[d] = base[d] + 2e4 + 3e4*rng.NormFloat64()
	}
	wt := make([]float64, n)
	for _, o := range []Objective{{Kind: CVaR, Level: 0.05, Weight: 0.7}, {Kind: CVaR, Level: 0.3, Weight: 2}, {Kind: Quantile, Level: 0.1}, {Kind: Quantile, Level: 0.5}} {
		exact := o.exact(v, base)
		for _, h := range []float64{1e3, 10, 0.01} {
			s := o.smoothed(v, base, h, wt)
			switch o.Kind {
			case CVaR:
				// objective = mean gain − λ·CVaR, so the surrogate sits below.
				if lo := exact - o.Weight*h*math.Ln2/o.Level; s > exact+1e-9*math.Abs(exact) || s < lo-1e-9*math.Abs(exact) {
					t.Errorf("%v h=%v: smoothed %v outside [%v, %v]", o, h, s, lo, exact)
				}
			case Quantile:
				// Equal to the type-8 sample quantile once h is far below the
				// gaps between order statistics, and within them before.
				srt := sample.Sorted(v)
				j := int(o.Level * float64(n))
				if h < 1 && math.Abs(s-exact) > 1e-9*math.Abs(exact) || s < srt[j-3] || s > srt[j+3] {
					t.Errorf("%v h=%v: smoothed %v, sample quantile %v", o, h, s, exact)
				}
			}
			if h < 1 {
				continue
			}
			// d surrogate / d V_d = wt_d, by central differences.
			for _, d := range []int{0, 7, 100, 249} {
				step := 1e-3 * h
				vp, vm := slices.Clone(v), slices.Clone(v)
				vp[d] += step
				vm[d] -= step
				scratch := make([]float64, n)
				fd := (o.smoothed(vp, base, h, scratch) - o.smoothed(vm, base, h, scratch)) / (2 * step)
				o.smoothed(v, base, h, wt)
				if math.Abs(fd-wt[d]) > 1e-6*(math.Abs(wt[d])+1e-3) {
					t.Errorf("%v h=%v: weight of draw %d is %v, finite difference %v", o, h, d, wt[d], fd)
				}
			}
		}
	}
}

// TestQuantileAgainstScan: with two channels and a budget equality the plan
// is one number, so the exact sample quantile (Hyndman & Fan type 8) of the
// value can be scanned on a fine grid; the allocator, which maximizes the
// smoothed quantile, must reach the scan's best within the scan's
// resolution (common practice, no source).
func TestQuantileAgainstScan(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 5))
	resp := randomCurves(rng, 60, []bool{true, false}, 20000, 2.5)
	p := Problem{Response: resp, Economics: Economics{Horizon: 13, Margin: 1, ValuePerKPI: 1},
		Constraints: Constraints{Horizon: 13, Budget: 13 * 40e3, Channels: []Limits{
			{Name: "a", Current: 20e3, Max: inf, MaxChange: inf}, {Name: "b", Current: 20e3, Max: inf, MaxChange: inf}}},
		Objective: Objective{Kind: Quantile, Level: 0.2}}
	best := math.Inf(-1)
	const steps = 20000
	for i := 0; i <= steps; i++ {
		a := 40e3 * float64(i) / steps
		if v := exactAt(p, []float64{a, 40e3 - a}); v > best {
			best = v
		}
	}
	r, err := Solve(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("scan best %.10g, sluice %.10g (smoothed %.10g)", best, r.Value, r.Surrogate)
	if r.Value < best-1e-6*math.Abs(best) {
		t.Errorf("sluice's quantile %v is below the scan's %v", r.Value, best)
	}
}

func TestProgress(t *testing.T) {
	p := benchProblem(200, Objective{})
	var names []string
	r, err := Solve(p, &Settings{Progress: func(s StartReport) { names = append(names, s.Name) }})
	if err != nil {
		t.Fatal(err)
	}
	// One call per start, then one per polished optimum.
	polished := 0
	for _, s := range r.Starts {
		if s.Polished {
			polished++
		}
	}
	if len(names) < len(r.Starts)+1 || len(names) > len(r.Starts)+polished || names[0] != "status quo" {
		t.Fatalf("progress calls %v for %d starts, %d polished", names, len(r.Starts), polished)
	}
}

func TestFixedPlan(t *testing.T) {
	p, _, _ := twoExp(t)
	p.Constraints.Channels[0].Locked = true
	p.Constraints.Channels[1].Locked = true
	r, err := Solve(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Status != Fixed || !slices.Equal(r.Proposed, []float64{15e3, 25e3}) || r.ExpectedGain != 0 || !r.KKT.OK {
		t.Fatalf("%+v", r)
	}
}

// TestMoreStartsFindNothingBetter: on the 12-channel S-shaped benchmark
// problem, forty more random starts reach no better optimum than the
// default start set.
func TestMoreStartsFindNothingBetter(t *testing.T) {
	if testing.Short() {
		t.Skip("many starts")
	}
	p := benchProblem(200, Objective{})
	r, err := Solve(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	more, err := Solve(p, &Settings{RandomStarts: 44, Seed: 1, Polish: 10})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("default: %.10g (%d of %d starts agree, %d distinct); 48 starts: %.10g (%d agree, %d distinct)",
		r.Value, r.Agreed, len(r.Starts), r.Distinct, more.Value, more.Agreed, more.Distinct)
	if more.Value > r.Value+1e-9*math.Abs(r.Value) {
		t.Errorf("more starts found %v, better than the default's %v", more.Value, r.Value)
	}
}

// TestSmoothedQuantileSmallSamples: at the edges of type 8 (a level so low
// or high that both ranks clamp to an end, Hyndman & Fan 1996) the
// smoothed quantile still tends to sample.Quantile.
func TestSmoothedQuantileSmallSamples(t *testing.T) {
	for _, v := range [][]float64{{5}, {3, 9}, {4, 1, 7}} {
		for _, q := range []float64{0.01, 0.2, 0.5, 0.9, 0.99} {
			o := Objective{Kind: Quantile, Level: q}
			wt := make([]float64, len(v))
			got := o.smoothed(v, nil, 1e-6, wt)
			if want := sample.Quantile(sample.Sorted(v), q, sample.Default); math.Abs(got-want) > 1e-9 {
				t.Errorf("%v at %v: smoothed %v, sample quantile %v", v, q, got, want)
			}
		}
	}
}
