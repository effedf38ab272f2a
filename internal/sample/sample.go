// Package sample summarizes samples of draws: sample quantiles by the nine
// definitions of Hyndman & Fan (1996), and the value-at-risk and conditional
// value-at-risk (expected shortfall) of Rockafellar & Uryasev (2000, 2002)
// with the boundary atom split as in Acerbi & Tasche (2002).
package sample

import (
	"math"
	"slices"
)

// Type is a Hyndman & Fan (1996) sample-quantile definition, 1 to 9.
type Type int

// Default is the quantile definition sluice reports everywhere: Hyndman &
// Fan's type 8, approximately median-unbiased whatever the distribution,
// which they recommend.
const Default Type = 8

// Sorted returns a sorted copy of x.
func Sorted(x []float64) []float64 {
	s := slices.Clone(x)
	slices.Sort(s)
	return s
}

// Quantile returns the p-quantile of the sorted sample s by definition t.
// It panics if s is empty, unsorted input gives meaningless results.
func Quantile(s []float64, p float64, t Type) float64 {
	n := len(s)
	if n == 0 {
		panic("sample: quantile of an empty sample")
	}
	if p <= 0 && t >= 4 {
		return s[0]
	}
	nf := float64(n)
	at := func(j int) float64 { // x_(j), 1-based, clamped to the sample range
		return s[min(max(j, 1), n)-1]
	}
	switch t {
	case 1, 2:
		np := nf * p
		j := int(math.Ceil(np))
		if j < 1 {
			return s[0]
		}
		if t == 2 && float64(j) == np {
			return (at(j) + at(j+1)) / 2
		}
		return at(j)
	case 3:
		// Nearest order statistic (m = -1/2): j = floor(np − 1/2), and
		// x_(j) only when np − 1/2 is the even integer j, else x_(j+1).
		h := nf*p - 0.5
		j := math.Floor(h)
		if h == j && int(j)%2 == 0 {
			return at(int(j))
		}
		return at(int(j) + 1)
	}
	var m float64
	switch t {
	case 4:
		m = 0
	case 5:
		m = 0.5
	case 6:
		m = p
	case 7:
		m = 1 - p
	case 8:
		m = (p + 1) / 3
	case 9:
		m = p/4 + 3.0/8
	default:
		panic("sample: quantile type must be 1..9")
	}
	h := nf*p + m
	j := math.Floor(h)
	g := h - j
	if g == 0 {
		return at(int(j))
	}
	return (1-g)*at(int(j)) + g*at(int(j)+1)
}

// Quantiles returns the quantiles of x (unsorted) at each p by the Default
// definition.
func Quantiles(x []float64, ps ...float64) []float64 {
	s := Sorted(x)
	q := make([]float64, len(ps))
	for i, p := range ps {
		q[i] = Quantile(s, p, Default)
	}
	return q
}

// LossVaRCVaR returns the value-at-risk and the conditional value-at-risk at
// level beta (e.g. 0.95) of losses L (larger is worse) with probabilities
// prob (nil means equally likely):
//
//	VaR  = min{ l : P(L <= l) >= beta }
//	CVaR = mean of the worst (1 − beta) probability mass, the atom at VaR split
//
// (Rockafellar & Uryasev 2002, Acerbi & Tasche 2002).
func LossVaRCVaR(loss, prob []float64, beta float64) (varBeta, cvar float64) {
	n := len(loss)
	if n == 0 {
		panic("sample: CVaR of an empty sample")
	}
	if prob != nil && len(prob) != n {
		panic("sample: probabilities and losses differ in length")
	}
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	slices.SortFunc(idx, func(a, b int) int { return -cmpFloat(loss[a], loss[b]) })
	p := func(i int) float64 {
		if prob == nil {
			return 1 / float64(n)
		}
		return prob[i]
	}
	tail := 1 - beta
	if tail <= 0 {
		return loss[idx[0]], loss[idx[0]]
	}
	// Walk from the worst loss down, taking mass until the tail is full.
	var taken, sum float64
	for _, i := range idx {
		m := min(p(i), tail-taken)
		sum += m * loss[i]
		taken += m
		if taken >= tail*(1-1e-12) {
			break
		}
	}
	return lossVaR(loss, idx, p, beta), sum / taken
}

// lossVaR is the lower beta-quantile min{l : P(L <= l) >= beta}, read from
// the cumulative distribution from below (desc holds indices, worst first).
func lossVaR(loss []float64, desc []int, p func(int) float64, beta float64) float64 {
	var cum float64
	for j := len(desc) - 1; j >= 0; j-- {
		i := desc[j]
		cum += p(i)
		if cum >= beta*(1-1e-12) {
			return loss[i]
		}
	}
	return loss[desc[0]]
}

// LowerCVaR returns the mean of the worst alpha share of equally likely
// outcomes x (larger is better), the boundary draw split: the lower-tail
// CVaR of an outcome, −CVaR_{1−alpha}(−x).
func LowerCVaR(x []float64, alpha float64) float64 {
	neg := make([]float64, len(x))
	for i, v := range x {
		neg[i] = -v
	}
	_, c := LossVaRCVaR(neg, nil, 1-alpha)
	return -c
}

// ShareBelow returns the share of x strictly below threshold.
func ShareBelow(x []float64, threshold float64) float64 {
	var k int
	for _, v := range x {
		if v < threshold {
			k++
		}
	}
	return float64(k) / float64(len(x))
}

// Mean returns the arithmetic mean of x.
func Mean(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += v
	}
	return s / float64(len(x))
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}
