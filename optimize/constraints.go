package optimize

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"sluice/internal/words"
)

// Constraints are the limits a plan must meet. A plan w gives the weekly
// spend w_k of channel k = 1..n in every week of the horizon of H weeks; c is
// the status quo. The feasible set is
//
//	H · Σ_k w_k = B                                 budget (H · Σ_k w_k ≤ B when AtMost)
//	l_k ≤ w_k ≤ u_k                                 box of channel k
//	L_g · Σ_k w_k ≤ Σ_{k∈g} w_k ≤ U_g · Σ_k w_k      share of group g
//
// where each box combines the channel's own limits,
//
//	l_k = max(0, Min_k, (1 − δ_k)·c_k),   u_k = min(Max_k, (1 + δ_k)·c_k),
//
// δ_k being MaxChange, so that |w_k − c_k| ≤ δ_k·c_k; a locked channel has
// l_k = u_k = c_k (its Min and Max still apply, so a lock outside them
// conflicts). Every constraint is linear, so the feasible set is a convex
// polyhedron. Check returns an error wrapping ErrInfeasible, naming the
// constraints in conflict, when it is empty.
type Constraints struct {
	Horizon  int     // H, weeks; > 0
	Budget   float64 // B, total spend over the horizon; >= 0
	AtMost   bool    // the budget is a ceiling rather than a target
	Channels []Limits
	Groups   []Group
}

// Limits are one channel's own limits.
type Limits struct {
	Name      string
	Current   float64 // c_k, the status quo weekly spend
	Min       float64 // lowest weekly spend; 0 for none
	Max       float64 // highest weekly spend; math.Inf(1) for none
	MaxChange float64 // δ_k, the largest change as a share of Current; math.Inf(1) for none
	Locked    bool    // keep the weekly spend at Current
}

// Group bounds the share of the total weekly spend that a set of channels
// takes.
type Group struct {
	Name     string
	Members  []int   // channel indices
	MinShare float64 // L_g in [0, 1]
	MaxShare float64 // U_g in [0, 1]; 1 for none
}

// ErrInfeasible is wrapped by the error Check and Solve return when the
// constraints cannot all hold.
var ErrInfeasible = errors.New("the constraints cannot all hold")

// InfeasibleError says which constraints conflict.
type InfeasibleError struct {
	Conflict []string // the constraints in conflict, in words
	Msg      string   // the whole explanation
}

func (e *InfeasibleError) Error() string { return "infeasible: " + e.Msg }

// Is makes errors.Is(err, ErrInfeasible) true.
func (e *InfeasibleError) Is(target error) bool { return target == ErrInfeasible }

// Weekly returns the weekly total the budget asks for, S = B/H.
func (c *Constraints) Weekly() float64 { return c.Budget / float64(c.Horizon) }

// Box returns the combined bounds l and u of every channel.
func (c *Constraints) Box() (lower, upper []float64) {
	lower = make([]float64, len(c.Channels))
	upper = make([]float64, len(c.Channels))
	for k, ch := range c.Channels {
		lower[k], upper[k] = ch.box()
	}
	return lower, upper
}

func (ch Limits) box() (lo, hi float64) {
	lo, hi = max(0, ch.Min), ch.Max
	if !math.IsInf(ch.MaxChange, 1) {
		lo = max(lo, (1-ch.MaxChange)*ch.Current)
		hi = min(hi, (1+ch.MaxChange)*ch.Current)
	}
	if ch.Locked {
		lo, hi = max(lo, ch.Current), min(hi, ch.Current)
	}
	return lo, hi
}

// validate refuses values no plan can mean (the plan parser refuses them
// earlier, with positions; this guards programmatic use).
func (c *Constraints) validate() error {
	bad := func(v float64) bool { return math.IsNaN(v) || v < 0 }
	if c.Horizon <= 0 {
		return fmt.Errorf("optimize: horizon %d weeks, must be positive", c.Horizon)
	}
	if bad(c.Budget) || math.IsInf(c.Budget, 0) {
		return fmt.Errorf("optimize: budget %v, must be a non-negative number", c.Budget)
	}
	for _, ch := range c.Channels {
		switch {
		case bad(ch.Current) || math.IsInf(ch.Current, 0):
			return fmt.Errorf("optimize: channel %s: current %v, must be a non-negative number", ch.Name, ch.Current)
		case bad(ch.Min) || math.IsInf(ch.Min, 0):
			return fmt.Errorf("optimize: channel %s: min %v, must be a non-negative number", ch.Name, ch.Min)
		case bad(ch.Max):
			return fmt.Errorf("optimize: channel %s: max %v, must be non-negative (+Inf for none)", ch.Name, ch.Max)
		case bad(ch.MaxChange):
			return fmt.Errorf("optimize: channel %s: max_change %v, must be non-negative (+Inf for none)", ch.Name, ch.MaxChange)
		case ch.Min > ch.Max:
			return fmt.Errorf("optimize: channel %s: min %s is above max %s", ch.Name, money(ch.Min), money(ch.Max))
		}
	}
	for _, g := range c.Groups {
		if !(g.MinShare >= 0 && g.MinShare <= 1 && g.MaxShare >= 0 && g.MaxShare <= 1) {
			return fmt.Errorf("optimize: group %s: shares must lie in [0, 1]", g.Name)
		}
		if g.MinShare > g.MaxShare {
			return fmt.Errorf("optimize: group %s: min_share %v is above max_share %v", g.Name, g.MinShare, g.MaxShare)
		}
		for _, k := range g.Members {
			if k < 0 || k >= len(c.Channels) {
				panic("optimize: group member index out of range")
			}
		}
	}
	return nil
}

// tol is the slack allowed when comparing sums of weekly spend: far below
// the 1e-9 of the budget every result is held to, far above rounding.
func (c *Constraints) tol() float64 {
	s := c.Weekly()
	for _, ch := range c.Channels {
		s += ch.Current
	}
	return 1e-12 * (s + 1)
}

// Check returns nil when some plan meets every constraint, and otherwise an
// *InfeasibleError (errors.Is(err, ErrInfeasible)) that names the
// constraints in conflict. Obvious conflicts (one channel's own limits, the
// budget against all boxes, one group against the budget) are explained
// with figures; any other conflict is found by the active-set projection and
// named by its certificate, the rows whose combination cannot hold.
func (c *Constraints) Check() error {
	if err := c.validate(); err != nil {
		return err
	}
	l, u := c.Box()
	tol := c.tol()
	for k, ch := range c.Channels {
		if l[k] > u[k]+tol {
			return &InfeasibleError{
				Conflict: []string{c.lowerWhy(k, l[k]), c.upperWhy(k, u[k])},
				Msg:      fmt.Sprintf("channel %s: %s but %s", ch.Name, c.lowerWhy(k, l[k]), c.upperWhy(k, u[k])),
			}
		}
	}
	all := make([]int, len(c.Channels))
	for k := range all {
		all[k] = k
	}
	S := c.Weekly()
	sumL, sumU := sum(l, all), sum(u, all)
	budget := fmt.Sprintf("budget %s over %d weeks", money(c.Budget), c.Horizon)
	if sumL > S+tol {
		kind := "needs"
		if c.AtMost {
			kind = "allows at most"
		}
		return &InfeasibleError{
			Conflict: append([]string{"budget"}, c.reasons(all, l, c.lowerWhy, true)...),
			Msg: fmt.Sprintf("%s %s weekly spend %s but the channel bounds need at least %s (%s)",
				budget, kind, money2(S, sumL), money2(sumL, S), strings.Join(c.reasons(all, l, c.lowerWhy, true), ", ")),
		}
	}
	if !c.AtMost && sumU < S-tol {
		return &InfeasibleError{
			Conflict: append([]string{"budget"}, c.reasons(all, u, c.upperWhy, false)...),
			Msg: fmt.Sprintf("%s needs weekly spend %s but the channel bounds allow at most %s (%s)",
				budget, money2(S, sumU), money2(sumU, S), strings.Join(c.reasons(all, u, c.upperWhy, false), ", ")),
		}
	}
	if !c.AtMost {
		if err := c.checkGroups(l, u, S, tol); err != nil {
			return err
		}
	}
	f := newFeasible(c)
	if f.conflict != nil {
		return c.conflictError(f, f.conflict)
	}
	y := make([]float64, len(f.free))
	for i, k := range f.free {
		hi := u[k]
		if math.IsInf(hi, 1) {
			hi = max(l[k], S)
		}
		y[i] = (l[k] + hi) / 2 / f.sigma
	}
	if _, conflict, err := f.project(y, y); err != nil {
		return err
	} else if conflict != nil {
		return c.conflictError(f, conflict)
	}
	return nil
}

// checkGroups explains the conflicts of one group with the budget target S
// and the boxes.
func (c *Constraints) checkGroups(l, u []float64, S, tol float64) error {
	for _, g := range c.Groups {
		in := g.Members
		out := complement(len(c.Channels), in)
		names := c.names(in)
		minS := fmt.Sprintf("group %s min_share %s", g.Name, share(g.MinShare))
		maxS := fmt.Sprintf("group %s max_share %s", g.Name, share(g.MaxShare))
		if need, can := g.MinShare*S, sum(u, in); need > can+tol {
			why := c.reasons(in, u, c.upperWhy, false)
			return &InfeasibleError{Conflict: append([]string{minS, "budget"}, why...),
				Msg: fmt.Sprintf("%s needs at least %s a week in %s but they allow at most %s (%s)",
					minS, money2(need, can), names, money2(can, need), strings.Join(why, ", "))}
		}
		if allow, must := g.MaxShare*S, sum(l, in); must > allow+tol {
			why := c.reasons(in, l, c.lowerWhy, true)
			return &InfeasibleError{Conflict: append([]string{maxS, "budget"}, why...),
				Msg: fmt.Sprintf("%s allows at most %s a week in %s but they need at least %s (%s)",
					maxS, money2(allow, must), names, money2(must, allow), strings.Join(why, ", "))}
		}
		if rest, can := (1-g.MaxShare)*S, sum(u, out); rest > can+tol {
			why := c.reasons(out, u, c.upperWhy, false)
			return &InfeasibleError{Conflict: append([]string{maxS, "budget"}, why...),
				Msg: fmt.Sprintf("%s leaves at least %s a week for the other channels but they allow at most %s (%s)",
					maxS, money2(rest, can), money2(can, rest), strings.Join(why, ", "))}
		}
		if rest, must := (1-g.MinShare)*S, sum(l, out); must > rest+tol {
			why := c.reasons(out, l, c.lowerWhy, true)
			return &InfeasibleError{Conflict: append([]string{minS, "budget"}, why...),
				Msg: fmt.Sprintf("%s leaves at most %s a week for the other channels but they need at least %s (%s)",
					minS, money2(rest, must), money2(must, rest), strings.Join(why, ", "))}
		}
	}
	return nil
}

// conflictError names the rows of an infeasibility certificate, adding the
// fixed channels (locks and boxes of zero width) that the budget and group
// rows carry in their right-hand sides.
func (c *Constraints) conflictError(f *feasible, rows []int) error {
	rows = slices.Clone(rows)
	rank := func(i int) [2]int { // budget, groups, then channel bounds, each in plan order
		r := f.rows[i]
		switch r.kind {
		case rowBudget:
			return [2]int{0, 0}
		case rowGroupMin, rowGroupMax:
			return [2]int{1, 2*r.index + int(r.kind-rowGroupMin)}
		}
		return [2]int{2, 2*r.index + int(r.kind-rowLower)}
	}
	slices.SortFunc(rows, func(a, b int) int {
		ra, rb := rank(a), rank(b)
		if ra[0] != rb[0] {
			return ra[0] - rb[0]
		}
		return ra[1] - rb[1]
	})
	var names []string
	fixedToo := map[int]bool{}
	for _, i := range rows {
		r := f.rows[i]
		switch r.kind {
		case rowBudget:
			if c.AtMost {
				names = append(names, fmt.Sprintf("budget at most %s", money(c.Budget)))
			} else {
				names = append(names, fmt.Sprintf("budget %s", money(c.Budget)))
			}
			for k := range c.Channels {
				fixedToo[k] = true
			}
		case rowLower:
			names = append(names, c.lowerWhy(f.free[r.index], f.lower[f.free[r.index]]))
		case rowUpper:
			names = append(names, c.upperWhy(f.free[r.index], f.upper[f.free[r.index]]))
		case rowGroupMin, rowGroupMax:
			g := c.Groups[r.index]
			if r.kind == rowGroupMin {
				names = append(names, fmt.Sprintf("group %s min_share %s", g.Name, share(g.MinShare)))
			} else {
				names = append(names, fmt.Sprintf("group %s max_share %s", g.Name, share(g.MaxShare)))
			}
			for k := range c.Channels {
				fixedToo[k] = true // the total Σ_k w_k includes every channel
			}
		}
	}
	var fixed []string
	for k := range c.Channels {
		if fixedToo[k] && f.pos[k] < 0 && f.fixed[k] > 0 {
			fixed = append(fixed, c.upperWhy(k, f.upper[k]))
		}
	}
	msg := joinAnd(names) + " cannot all hold"
	if len(names) == 1 {
		msg = names[0] + " cannot hold"
	}
	if len(fixed) > 0 {
		msg += " with " + joinAnd(fixed)
	}
	return &InfeasibleError{Conflict: append(names, fixed...), Msg: msg}
}

// reasons describes the bound of each channel in idx, leaving out zero lower
// bounds when skipZero.
func (c *Constraints) reasons(idx []int, bound []float64, why func(int, float64) string, skipZero bool) []string {
	var out []string
	for _, k := range idx {
		if skipZero && bound[k] == 0 {
			continue
		}
		out = append(out, why(k, bound[k]))
	}
	if len(out) == 0 {
		out = append(out, "no channel bound")
	}
	return out
}

// upperWhy says which limit sets channel k's upper bound u.
func (c *Constraints) upperWhy(k int, u float64) string {
	ch := c.Channels[k]
	switch {
	case math.IsInf(u, 1):
		return ch.Name + " unbounded"
	case ch.Locked && u == ch.Current:
		return fmt.Sprintf("%s locked at %s", ch.Name, money(u))
	case u == ch.Max:
		return fmt.Sprintf("%s max %s", ch.Name, money(u))
	default:
		return fmt.Sprintf("%s max_change %s from %s allows at most %s", ch.Name, share(ch.MaxChange), money(ch.Current), money(u))
	}
}

// lowerWhy says which limit sets channel k's lower bound l.
func (c *Constraints) lowerWhy(k int, l float64) string {
	ch := c.Channels[k]
	switch {
	case ch.Locked && l == ch.Current:
		return fmt.Sprintf("%s locked at %s", ch.Name, money(l))
	case l == ch.Min && l > 0:
		return fmt.Sprintf("%s min %s", ch.Name, money(l))
	case l == 0:
		return ch.Name + " at least 0"
	default:
		return fmt.Sprintf("%s max_change %s from %s needs at least %s", ch.Name, share(ch.MaxChange), money(ch.Current), money(l))
	}
}

func (c *Constraints) names(idx []int) string {
	var s []string
	for _, k := range idx {
		s = append(s, c.Channels[k].Name)
	}
	return strings.Join(s, ", ")
}

// violation returns the largest violation of any constraint by w, in
// currency per week, and which constraint it is.
func (c *Constraints) violation(w []float64) (float64, string) {
	l, u := c.Box()
	var worst float64
	what := ""
	note := func(v float64, s string) {
		if v > worst {
			worst, what = v, s
		}
	}
	var total float64
	for k := range w {
		total += w[k]
		note(l[k]-w[k], c.Channels[k].Name+" lower bound")
		note(w[k]-u[k], c.Channels[k].Name+" upper bound")
	}
	S := c.Weekly()
	if c.AtMost {
		note(total-S, "budget")
	} else {
		note(math.Abs(total-S), "budget")
	}
	for _, g := range c.Groups {
		var in float64
		for _, k := range g.Members {
			in += w[k]
		}
		note(g.MinShare*total-in, "group "+g.Name+" min_share")
		note(in-g.MaxShare*total, "group "+g.Name+" max_share")
	}
	return worst, what
}

func sum(x []float64, idx []int) float64 {
	var s float64
	for _, k := range idx {
		s += x[k]
	}
	return s
}

func complement(n int, idx []int) []int {
	in := make([]bool, n)
	for _, k := range idx {
		in[k] = true
	}
	var out []int
	for k := range n {
		if !in[k] {
			out = append(out, k)
		}
	}
	return out
}

// money formats a currency amount with thousands separators, rounded to a
// whole unit when it is large.
func money(x float64) string {
	if math.IsInf(x, 0) || math.IsNaN(x) {
		return strconv.FormatFloat(x, 'g', -1, 64)
	}
	if math.Abs(x) < 1000 && x != math.Round(x) {
		return strconv.FormatFloat(x, 'g', 6, 64)
	}
	s := strconv.FormatFloat(math.Abs(math.Round(x)), 'f', 0, 64)
	var b strings.Builder
	if x < 0 && s != "0" {
		b.WriteByte('-')
	}
	for i, r := range s {
		if i > 0 && (len(s)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(r)
	}
	return b.String()
}

// money2 formats a so that it reads differently from b when they differ
// only below a whole unit.
func money2(a, b float64) string {
	if money(a) != money(b) {
		return money(a)
	}
	return strconv.FormatFloat(a, 'g', 12, 64)
}

func share(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

func joinAnd(w []string) string { return words.JoinAnd(w) }
