package optimize

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// waterFill is the analytic optimum of exponential saturation with a
// budget, derived here from the KKT conditions (Karush 1939, Kuhn & Tucker
// 1951), the water-filling argument of Boyd & Vandenberghe (2004), Convex
// Optimization, Example 5.2.
//
// With R_k(w) = β_k·(1 − e^{−w/K_k}) for every draw (β varies by draw, K_k
// does not), the expected value is m·Σ_k β̄_k(1 − e^{−w_k/K_k}) − H·Σ_k w_k
// with m = margin·value_per_kpi and β̄_k the mean over draws. It is concave,
// so the KKT conditions are sufficient. Under Σ_k w_k = S the H term is
// constant and stationarity asks for equal marginal returns:
//
//	m·β̄_k/K_k · e^{−w_k/K_k} = ν   ⇒   w_k = K_k·ln(m·β̄_k / (K_k·ν))
//
// for channels inside [l_k, u_k]; the others sit at the bound they press
// against. On the set I of interior channels the budget fixes ν:
//
//	ln ν = (Σ_{k∈I} K_k·ln(m·β̄_k/K_k) − (S − Σ_{k∉I} w_k)) / Σ_{k∈I} K_k.
//
// Which channels are interior is found by bisection on ln ν (w_k(ν) falls
// as ν rises); the optimum is then the closed form. With a budget ceiling
// that does not bind, ν = H: every channel spends until its marginal return
// equals its cost, w_k = K_k·ln(m·β̄_k/(K_k·H)).
func waterFill(m float64, beta, K, lo, hi []float64, S float64) []float64 {
	n := len(beta)
	at := func(lnNu float64) []float64 {
		w := make([]float64, n)
		for k := range n {
			w[k] = min(max(K[k]*(math.Log(m*beta[k]/K[k])-lnNu), lo[k]), hi[k])
		}
		return w
	}
	a, b := -50.0, 50.0
	for range 200 {
		mid := (a + b) / 2
		var s float64
		for _, v := range at(mid) {
			s += v
		}
		if s > S {
			a = mid
		} else {
			b = mid
		}
	}
	w := at((a + b) / 2)
	var num, den, rest float64
	for k := range n {
		if w[k] > lo[k] && w[k] < hi[k] {
			num += K[k] * math.Log(m*beta[k]/K[k])
			den += K[k]
		} else {
			rest += w[k]
		}
	}
	lnNu := (num - (S - rest)) / den
	for k := range n {
		if w[k] > lo[k] && w[k] < hi[k] {
			w[k] = K[k] * (math.Log(m*beta[k]/K[k]) - lnNu)
		}
	}
	return w
}

// expDraws returns exponential curves with D draws of β around beta and
// fixed K, and the draws' mean β.
func expDraws(seed uint64, D int, beta, K []float64) (*curves, []float64) {
	rng := rand.New(rand.NewPCG(seed, 1))
	n := len(beta)
	c := &curves{hill: make([]bool, n)}
	mean := make([]float64, n)
	for range D {
		b := make([]float64, n)
		kk := make([]float64, n)
		for k := range n {
			b[k] = beta[k] * math.Exp(0.2*rng.NormFloat64())
			kk[k] = K[k]
			mean[k] += b[k] / float64(D)
		}
		c.beta, c.K, c.S = append(c.beta, b), append(c.K, kk), append(c.S, make([]float64, n))
	}
	return c, mean
}

func TestClosedFormExponential(t *testing.T) {
	inf := math.Inf(1)
	cases := []struct {
		name    string
		beta, K []float64
		cur     []float64
		lim     []Limits // overrides; nil for none
		weekly  float64
		atMost  bool
		margin  float64
		nAtBd   int // channels expected at a bound
	}{
		{name: "two channels", beta: []float64{900e3, 500e3}, K: []float64{30e3, 20e3}, cur: []float64{20e3, 20e3}, weekly: 40e3, margin: 1},
		{name: "three channels, one shut", beta: []float64{900e3, 600e3, 40e3}, K: []float64{30e3, 20e3, 25e3}, cur: []float64{20e3, 20e3, 10e3}, weekly: 45e3, margin: 1, nAtBd: 1},
		{name: "three channels, a cap binds", beta: []float64{1200e3, 600e3, 500e3}, K: []float64{30e3, 20e3, 25e3}, cur: []float64{20e3, 15e3, 15e3},
			lim: []Limits{{Max: 25e3, MaxChange: inf}, {Max: inf, MaxChange: inf}, {Min: 12e3, Max: inf, MaxChange: inf}}, weekly: 60e3, margin: 0.8, nAtBd: 1},
		{name: "ceiling that does not bind", beta: []float64{900e3, 600e3, 500e3}, K: []float64{30e3, 20e3, 25e3}, cur: []float64{20e3, 15e3, 15e3},
			weekly: 400e3, atMost: true, margin: 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			resp, mean := expDraws(5, 40, c.beta, c.K)
			n := len(c.beta)
			lim := make([]Limits, n)
			lo := make([]float64, n)
			hi := make([]float64, n)
			for k := range n {
				lim[k] = Limits{Name: fmt.Sprint("ch", k), Current: c.cur[k], Max: inf, MaxChange: inf}
				if c.lim != nil {
					lim[k].Min, lim[k].Max = c.lim[k].Min, c.lim[k].Max
				}
				lo[k], hi[k] = lim[k].Min, lim[k].Max
			}
			const H = 13
			p := Problem{Response: resp, Economics: Economics{Horizon: H, Margin: c.margin, ValuePerKPI: 1},
				Constraints: Constraints{Horizon: H, Budget: H * c.weekly, AtMost: c.atMost, Channels: lim}}
			var want []float64
			if c.atMost {
				// ν = H/m: marginal return equals cost.
				want = make([]float64, n)
				for k := range n {
					want[k] = min(max(c.K[k]*math.Log(c.margin*mean[k]/(c.K[k]*H)), lo[k]), hi[k])
				}
			} else {
				want = waterFill(c.margin, mean, c.K, lo, hi, c.weekly)
			}
			r, err := Solve(p, nil)
			if err != nil {
				t.Fatal(err)
			}
			bound := 0
			worst := 0.0
			for k := range n {
				d := math.Abs(r.Proposed[k]-want[k]) / max(want[k], c.weekly/float64(n))
				worst = max(worst, d)
				if d > 1e-6 {
					t.Errorf("channel %d: %.9g, analytic %.9g (relative %.2g)", k, r.Proposed[k], want[k], d)
				}
				if want[k] == lo[k] || want[k] == hi[k] {
					bound++
				}
			}
			t.Logf("largest relative difference from the analytic optimum %.2g", worst)
			if bound != c.nAtBd {
				t.Errorf("analytic optimum has %d channels at a bound, the case means %d", bound, c.nAtBd)
			}
			if !r.KKT.OK {
				t.Errorf("KKT: %+v", r.KKT)
			}
		})
	}
}
