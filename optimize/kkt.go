package optimize

import (
	"fmt"
	"math"
	"strings"
)

// KKT is the first-order optimality check of a proposal (Karush 1939, Kuhn &
// Tucker 1951; Nocedal & Wright 2006, Theorem 12.1). With m_k the marginal
// value of channel k — the objective's gradient per unit of weekly spend,
// divided by the horizon so that it reads as a net ROI, currency gained per
// currency spent — the proposal is optimal to first order when multipliers
// μ (the budget, ≥ 0 when it is a ceiling, 0 when the ceiling is slack) and
// ν_j ≥ 0 (the group shares at their bounds, normal a_j) exist with
//
//	m_k = m̂_k  for channels strictly inside their bounds,
//	m_k ≤ m̂_k  at a lower bound,   m_k ≥ m̂_k  at an upper bound,
//	m̂_k = μ − Σ_j ν_j a_jk,
//
// so that, without active groups, interior channels share one marginal
// value μ. The check finds the multipliers that minimize the largest
// violation t (a small quadratic program), and reports t. Fixed channels
// (locks, boxes of zero width) take no part. For the quantile and CVaR
// objectives the gradient is that of the smoothed objective the solver
// maximized.
type KKT struct {
	OK           bool
	MaxViolation float64   // largest violation t, in net ROI
	Multiplier   float64   // μ: the net return of the last currency unit of weekly budget
	Groups       []float64 // ν of each group share at its bound (min share positive, max share negative), 0 when slack
	Detail       string
}

// checkKKT checks plan w with objective gradient grad (per unit of weekly
// spend, every channel).
func checkKKT(f *feasible, w, grad []float64, horizon int, tol float64) KKT {
	c := f.c
	H := float64(horizon)
	m := len(f.free)
	S := c.Weekly()
	var total float64
	for _, v := range w {
		total += v
	}
	atTol := 1e-7 * f.sigma
	const (
		interior = iota
		atLower
		atUpper
	)
	state := make([]int, m)
	marg := make([]float64, m)
	for i, k := range f.free {
		marg[i] = grad[k] / H
		switch {
		case w[k]-f.lower[k] <= atTol:
			state[i] = atLower
		case f.upper[k]-w[k] <= atTol:
			state[i] = atUpper
		}
	}
	var act []int // active group rows
	for ri, r := range f.rows {
		if r.kind != rowGroupMin && r.kind != rowGroupMax {
			continue
		}
		if dot(r.a, f.toY(nil, w))-r.b <= atTol/f.sigma*float64(m) {
			act = append(act, ri)
		}
	}
	budgetSlack := c.AtMost && S-total > atTol*float64(max(m, 1))
	// Variables θ = (μ, ν_1..ν_a, t); minimize ½t² + ½ε(μ² + Σν²).
	na := len(act)
	nv := na + 2
	G := make([]float64, nv*nv)
	for i := range nv - 1 {
		G[i*nv+i] = 1e-8
	}
	G[nv*nv-1] = 1
	var rows []row
	neq := 0
	if budgetSlack {
		a := make([]float64, nv)
		a[0] = 1
		rows = append(rows, row{a: a})
		neq = 1
	}
	mhat := func(i int) []float64 { // coefficients of m̂_i in θ
		a := make([]float64, nv)
		a[0] = 1
		for j, ri := range act {
			a[1+j] = -f.rows[ri].a[i]
		}
		return a
	}
	for i := range m {
		// t − m_i + m̂_i ≥ 0 (m_i ≤ m̂_i + t) unless at an upper bound.
		if state[i] != atUpper {
			a := mhat(i)
			a[nv-1] = 1
			rows = append(rows, row{a: a, b: marg[i]})
		}
		// t + m_i − m̂_i ≥ 0 (m_i ≥ m̂_i − t) unless at a lower bound.
		if state[i] != atLower {
			a := mhat(i)
			for j := range a {
				a[j] = -a[j]
			}
			a[nv-1] = 1
			rows = append(rows, row{a: a, b: -marg[i]})
		}
	}
	for j := range na {
		a := make([]float64, nv)
		a[1+j] = 1
		rows = append(rows, row{a: a})
	}
	if c.AtMost && !budgetSlack {
		a := make([]float64, nv)
		a[0] = 1
		rows = append(rows, row{a: a})
	}
	tRow := make([]float64, nv)
	tRow[nv-1] = 1
	rows = append(rows, row{a: tRow})
	p := qp{n: nv, G: G, a: make([]float64, nv), rows: rows, neq: neq}
	theta, conflict, err := p.solve(nil)
	if err != nil || conflict != nil {
		return KKT{MaxViolation: math.Inf(1), Detail: "the multipliers could not be computed"}
	}
	theta[nv-1] = 0
	// The exact violation at these multipliers, and who causes it.
	worst, who := 0.0, -1
	for i := range m {
		mh := dot(mhat(i), theta)
		var v float64
		switch state[i] {
		case interior:
			v = math.Abs(marg[i] - mh)
		case atLower:
			v = marg[i] - mh
		case atUpper:
			v = mh - marg[i]
		}
		if v > worst {
			worst, who = v, i
		}
	}
	k := KKT{MaxViolation: worst, Multiplier: theta[0], Groups: make([]float64, len(c.Groups))}
	k.OK = worst <= tol
	for j, ri := range act {
		r := f.rows[ri]
		if r.kind == rowGroupMin {
			k.Groups[r.index] += theta[1+j]
		} else {
			k.Groups[r.index] -= theta[1+j]
		}
	}
	var nl, nu, ni int
	for _, s := range state {
		switch s {
		case atLower:
			nl++
		case atUpper:
			nu++
		default:
			ni++
		}
	}
	var groups []string
	for _, ri := range act {
		r := f.rows[ri]
		g := c.Groups[r.index]
		if r.kind == rowGroupMin {
			groups = append(groups, fmt.Sprintf("%s min_share %s", g.Name, share(g.MinShare)))
		} else {
			groups = append(groups, fmt.Sprintf("%s max_share %s", g.Name, share(g.MaxShare)))
		}
	}
	summary := fmt.Sprintf("%d channels inside their bounds, %d at a lower and %d at an upper bound", ni, nl, nu)
	if len(groups) > 0 {
		summary += "; groups at their bound: " + strings.Join(groups, ", ")
	}
	if k.OK || who < 0 {
		k.Detail = fmt.Sprintf("optimal to first order (largest violation %.3g, budget multiplier %.6g); %s", worst, theta[0], summary)
		return k
	}
	name := c.Channels[f.free[who]].Name
	mh := dot(mhat(who), theta)
	switch state[who] {
	case interior:
		k.Detail = fmt.Sprintf("not optimal: %s is inside its bounds with marginal net ROI %.6g but the multiplier is %.6g", name, marg[who], mh)
	case atLower:
		k.Detail = fmt.Sprintf("not optimal: %s is at its lower bound with marginal net ROI %.6g above the multiplier %.6g", name, marg[who], mh)
	case atUpper:
		k.Detail = fmt.Sprintf("not optimal: %s is at its upper bound with marginal net ROI %.6g below the multiplier %.6g", name, marg[who], mh)
	}
	k.Detail += "; " + summary
	return k
}
