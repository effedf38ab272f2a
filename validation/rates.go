package validation

import (
	"math"
	"sync"

	"gonum.org/v1/gonum/stat/distuv"
)

// A check that tests the model carries, beside its metric, its p-value: the
// probability that the check's metric would be at least as bad as observed
// if the fitted model were right, at the sizes actually used. The check
// fires (fails) when the p-value is below its false-alarm rate, so on a
// right model it fires at that rate. How each p-value is computed is said
// on the check (Check.Null):
//
//   - "simulated": the same metric computed on panels simulated from the
//     fit (the fitted curve plus the fit's residuals, inflated for the
//     degrees of freedom and resampled in moving blocks, as the recovery
//     check draws them; one set of panels serves recovery, accuracy and
//     quarter-out), compared with the observed value by the prediction
//     interval of a normal sample: t = (v − mean)/(sd·√(1 + 1/R)) has a
//     Student t distribution with R − 1 degrees of freedom when the R
//     simulated values and v are normal and independent (the standard
//     prediction interval for one new observation; e.g. Hahn & Meeker 1991,
//     Statistical Intervals, chapter 4, from memory). Positive metrics whose
//     spread grows with their size (wMAPE, MASE, relative changes) are
//     compared on a log scale. The tail formula, rather than the share of
//     simulated values beyond v, is used because a share from 20 panels
//     cannot resolve rates below 1/21.
//   - "normal" or "student t": a z or t statistic with a known
//     distribution (lift agreement, drift).
//   - "binomial": a count of covered weeks (forecast coverage).
//
// Checks that describe precision (ROI spread over the draws, break-even
// flips, recovery error and bias, spend collinearity) carry no p-value:
// they are not tests of the model but measures of how precisely the data
// settle it, which the risk figures already carry through the same draws.
// The gate does not act on them twice (Basis "precision").

// Family allowance: a policy states one false-alarm rate per family of
// checks; within the family it is split evenly over the family's tested
// checks (every channel's check counts), the Bonferroni allowance, so the
// chance that any check of the family fires on a right model is at most the
// family's rate (Bonferroni's inequality). Grade applies it.

// BasisPrecision marks a check that measures precision rather than
// testing the model; see the comment above.
const BasisPrecision = "precision"

// RateFor returns a family's false-alarm rates: a check of the family warns
// when its share of warn, and fails when its share of fail, exceeds its
// p-value.
type RateFor func(f Family) Limit

// DefaultRates is the default false-alarm allowance of every family: fail
// at 5%, warn at 20% (common practice, no source: 5% is the conventional
// test size; a warning is meant to be seen often).
func DefaultRates(Family) Limit { return Limit{Warn: 0.20, Fail: 0.05} }

// Grade sets the status and per-check rate of every check that has a
// p-value, by its family's rates split over the family's tested checks.
// Checks without a p-value keep the status their raw threshold gave them.
func Grade(checks []Check, rates RateFor) {
	tested := map[Family]int{}
	for _, c := range checks {
		if c.PValue != nil {
			tested[c.Family]++
		}
	}
	for i := range checks {
		c := &checks[i]
		if c.PValue == nil || c.RawThreshold {
			continue
		}
		r := rates(c.Family)
		m := float64(tested[c.Family])
		c.Rate = r.Fail / m
		p := *c.PValue
		switch {
		case math.IsNaN(p) || p < r.Fail/m:
			c.Status = Fail
		case p < r.Warn/m:
			c.Status = Warn
		default:
			c.Status = Pass
		}
	}
}

// nullValues collects a metric per key over simulated panels; safe for
// concurrent adds.
type nullValues struct {
	mu sync.Mutex
	v  map[string][]float64
}

func (n *nullValues) add(key string, v float64) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return
	}
	n.mu.Lock()
	defer n.mu.Unlock()
	if n.v == nil {
		n.v = map[string][]float64{}
	}
	n.v[key] = append(n.v[key], v)
}

// count returns how many simulated values key has.
func (n *nullValues) count(key string) int {
	n.mu.Lock()
	defer n.mu.Unlock()
	return len(n.v[key])
}

// pValue is the probability, under the simulated null, that the metric is
// at least as bad as obs: larger is worse unless lowerWorse; logScale
// compares logarithms (for positive metrics). NaN when fewer than 3
// simulated values are usable.
func (n *nullValues) pValue(key string, obs float64, lowerWorse, logScale bool) float64 {
	n.mu.Lock()
	vals := n.v[key]
	n.mu.Unlock()
	tr := func(v float64) float64 {
		if logScale {
			return math.Log(max(v, 1e-12))
		}
		return v
	}
	var x []float64
	for _, v := range vals {
		x = append(x, tr(v))
	}
	if len(x) < 3 || math.IsNaN(obs) {
		return math.NaN()
	}
	m, s := meanOf(x), sd(x)
	r := float64(len(x))
	if s == 0 {
		s = 1e-12 * max(1, math.Abs(m))
	}
	t := (tr(obs) - m) / (s * math.Sqrt(1+1/r))
	if lowerWorse {
		t = -t
	}
	return 1 - distuv.StudentsT{Mu: 0, Sigma: 1, Nu: r - 1}.CDF(t)
}

// twoSidedNormal is the probability that a standard normal is beyond ±|z|.
func twoSidedNormal(z float64) float64 {
	return 2 * (1 - distuv.UnitNormal.CDF(math.Abs(z)))
}

// twoSidedT is the probability that Student's t with nu degrees of freedom
// is beyond ±|t|.
func twoSidedT(t, nu float64) float64 {
	return 2 * (1 - distuv.StudentsT{Mu: 0, Sigma: 1, Nu: nu}.CDF(math.Abs(t)))
}

// binomialAtMost is P(X ≤ k) for X ~ Binomial(n, p).
func binomialAtMost(k, n int, p float64) float64 {
	return distuv.Binomial{N: float64(n), P: p}.CDF(float64(k))
}

func ptr(v float64) *float64 { return &v }
