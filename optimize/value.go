// Package optimize proposes next quarter's weekly spend per channel: it
// maximizes the value of a plan over a set of response-curve draws, under the
// budget, per-channel bounds, maximum changes, locks and group shares that a
// media team really has.
//
// A plan file (LoadPlan, ParsePlan) becomes a Problem through Plan.Resolve;
// the model adds its Response. Solve maximizes the Objective — the expected
// value, a low quantile of it, or the mean gain less a weighted CVaR of the
// loss — by sequential quadratic programming: every step solves a quadratic
// model over the whole feasible polyhedron (Constraints) with an exact
// active-set method, so no iterate ever leaves it. S-shaped curves make the
// problem non-concave, so Solve starts from several points, among them the
// exact optimum of a budget grid found by dynamic programming, and reports
// how many starts agree and whether the result meets the KKT conditions.
package optimize

// Response is a family of horizon response curves: for each draw d and
// channel k, R_dk(w) is the extra KPI (in KPI units, over the horizon plus its
// carryover tail) from spending w per week in each of the horizon's weeks,
// against spending nothing (README.md, "Horizon response").
//
// Implementations must be safe for concurrent use by several goroutines.
type Response interface {
	NumDraws() int
	NumChannels() int
	// Eval returns R_dk(w) and its derivative dR_dk/dw at w >= 0.
	Eval(d, k int, w float64) (r, dr float64)
}

// Economics turns KPI into money. The value of a plan w under one draw is
//
//	Margin · ValuePerKPI · Σ_k R_k(w_k) − Horizon · Σ_k w_k
//
// so a budget-neutral move is judged on response alone, and a budget change
// pays for itself or not (README.md, "Value of a plan").
type Economics struct {
	Horizon     int     // weeks in the plan; must be > 0
	Margin      float64 // share of KPI value that is profit; 1 when the KPI is already margin
	ValuePerKPI float64 // currency per KPI unit; 1 for a revenue KPI
}

// Value returns the value of plan w under draw d. If grad is not nil it
// receives the gradient with respect to w (len(grad) == len(w)).
func (e Economics) Value(resp Response, d int, w, grad []float64) float64 {
	if len(w) != resp.NumChannels() {
		panic("optimize: plan length does not match channel count")
	}
	var v float64
	for k, wk := range w {
		vk, dk := e.ChannelValue(resp, d, k, wk)
		v += vk
		if grad != nil {
			grad[k] = dk
		}
	}
	return v
}

// ChannelValue returns channel k's term of Value under draw d at weekly
// spend w, Margin · ValuePerKPI · R_dk(w) − Horizon · w, and its derivative.
// Value is their sum over channels.
func (e Economics) ChannelValue(resp Response, d, k int, w float64) (v, dv float64) {
	r, dr := resp.Eval(d, k, w)
	scale := e.Margin * e.ValuePerKPI
	h := float64(e.Horizon)
	return scale*r - h*w, scale*dr - h
}

// Gains writes into dst (allocated if nil) the gain of moving from the status
// quo c to w under every draw: Value(w) − Value(c). Its distribution is what
// the risk figures (probability of loss, downside quantile, CVaR) summarize.
func (e Economics) Gains(dst []float64, resp Response, w, c []float64) []float64 {
	n := resp.NumDraws()
	if dst == nil {
		dst = make([]float64, n)
	}
	if len(dst) != n {
		panic("optimize: gains destination has wrong length")
	}
	for d := range n {
		dst[d] = e.Value(resp, d, w, nil) - e.Value(resp, d, c, nil)
	}
	return dst
}

// MarginalROI converts one entry of Value's gradient (currency of value per
// unit of weekly spend) into the money marginal ROI of README.md,
// Margin · ValuePerKPI · (dR/dw) / Horizon: the currency the last unit of
// spend returns. Since grad = Margin·ValuePerKPI·dR/dw − Horizon, this is
// 1 + grad/Horizon.
func (e Economics) MarginalROI(grad float64) float64 {
	return 1 + grad/float64(e.Horizon)
}
