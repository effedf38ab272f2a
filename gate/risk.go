package gate

import (
	"math"

	"sluice/internal/sample"
	"sluice/optimize"
	"sluice/policies"
)

// Risk summarizes the gain distribution of one move over the draws. Gains
// and money are over the plan's horizon unless a name says per week.
type Risk struct {
	PLoss         float64 `json:"p_loss"`         // share of draws with a gain below zero
	Downside      float64 `json:"downside"`       // gain quantile at DownsideLevel (Hyndman–Fan type 8)
	DownsideLevel float64 `json:"downside_level"` // e.g. 0.05
	CVaR          float64 `json:"cvar"`           // mean gain of the worst CVaRLevel of draws
	CVaRLevel     float64 `json:"cvar_level"`
	ExpectedGain  float64 `json:"expected_gain"` // mean gain
	P05           float64 `json:"p05"`           // gain quantiles, type 8
	P50           float64 `json:"p50"`
	P95           float64 `json:"p95"`
	MovedPerWeek  float64 `json:"moved_per_week"`     // money moved, max(Σ increases, Σ cuts)
	MovedHorizon  float64 `json:"moved_over_horizon"` // MovedPerWeek × horizon
}

// measure summarizes gains (not modified) of a move that moves movedPerWeek.
func measure(gains []float64, lim policies.Risk, movedPerWeek float64, horizon int) Risk {
	r, _ := measureSorted(gains, lim, movedPerWeek, horizon)
	return r
}

// measureSorted is measure that also returns the sorted gains.
func measureSorted(gains []float64, lim policies.Risk, movedPerWeek float64, horizon int) (Risk, []float64) {
	s := sample.Sorted(gains)
	q := func(p float64) float64 { return sample.Quantile(s, p, sample.Default) }
	return Risk{
		PLoss:         sample.ShareBelow(gains, 0),
		Downside:      pz(q(lim.DownsideLevel)),
		DownsideLevel: lim.DownsideLevel,
		CVaR:          pz(sample.LowerCVaR(gains, lim.CVaRLevel)),
		CVaRLevel:     lim.CVaRLevel,
		ExpectedGain:  pz(sample.Mean(gains)),
		P05:           pz(q(0.05)),
		P50:           pz(q(0.5)),
		P95:           pz(q(0.95)),
		MovedPerWeek:  movedPerWeek,
		MovedHorizon:  movedPerWeek * float64(horizon),
	}, s
}

// moved returns the money a plan w moves from c per week:
// max(Σ increases, Σ cuts) = ½Σ|w−c| + ½|Σ(w−c)| (policies package doc).
func moved(w, c []float64) float64 {
	var up, down float64
	for k := range w {
		if d := w[k] - c[k]; d > 0 {
			up += d
		} else {
			down -= d
		}
	}
	return max(up, down)
}

// limit names one of the policy's risk limits.
type limit int

const (
	lossLimit limit = iota
	downsideLimit
	cvarLimit
	expectedLimit
)

// breach is a limit a move does not meet: its value and the policy's bound.
type breach struct {
	limit        limit
	value, bound float64
}

// breaches lists the limits of lim that r does not meet.
func breaches(r Risk, lim policies.Risk) []breach {
	var b []breach
	if r.PLoss > lim.MaxLossProbability {
		b = append(b, breach{lossLimit, r.PLoss, lim.MaxLossProbability})
	}
	if f, ok := lim.DownsideFloorFor(r.MovedHorizon); ok && r.Downside < f {
		b = append(b, breach{downsideLimit, r.Downside, f})
	}
	if f, ok := lim.CVaRFloorFor(r.MovedHorizon); ok && r.CVaR < f {
		b = append(b, breach{cvarLimit, r.CVaR, f})
	}
	if lim.MinExpectedGain != nil && r.ExpectedGain < *lim.MinExpectedGain {
		b = append(b, breach{expectedLimit, r.ExpectedGain, *lim.MinExpectedGain})
	}
	return b
}

// RiskOf returns the risk figures of moving from r.Current to plan over the
// draws of r.Response, at the levels of r.Policy.
func RiskOf(r Review, plan []float64) Risk {
	ev := newEvaluator(r)
	return ev.risk(make([]float64, ev.resp.NumDraws()), plan)
}

// evaluator measures moves from the status quo c. It evaluates gains with
// Economics.Gains through a Response that remembers R_dk(c_k): a partial
// move changes a few channels, and the others (and all of Value(c)) are then
// looked up instead of recomputed.
type evaluator struct {
	resp    *memo
	econ    optimize.Economics
	current []float64
	limits  policies.Risk
}

func newEvaluator(r Review) *evaluator {
	return &evaluator{resp: newMemo(r.Response, r.Current), econ: r.Economics, current: r.Current, limits: limitsOf(r)}
}

// limitsOf is the policy's risk limits with the review's quarter budget
// (current weekly spend × horizon) for the floors set as budget shares.
func limitsOf(r Review) policies.Risk {
	lim := r.Policy.Risk
	lim.Budget = 0
	for _, c := range r.Current {
		lim.Budget += c
	}
	lim.Budget *= float64(r.Economics.Horizon)
	return lim
}

// risk measures the move to plan, using buf (one slot per draw) for gains.
func (ev *evaluator) risk(buf, plan []float64) Risk {
	g := ev.econ.Gains(buf, ev.resp, plan, ev.current)
	return measure(g, ev.limits, moved(plan, ev.current), ev.econ.Horizon)
}

// chunk is how many draws passes evaluates between its checks for a
// certain failure.
const chunk = 64

// passes reports whether the move to plan meets the limits. With quick set it
// evaluates the draws a chunk at a time (Economics.Gains over a window of the draws) and
// stops as soon as the draws seen so far already break a limit whatever the
// others turn out to be; full reports whether all draws were evaluated, and
// only then is r the move's risk (slack is then estimated from the draws
// seen). The answer is the same as measuring all
// draws: every early stop is a certain failure.
func (ev *evaluator) passes(buf, plan []float64, quick bool) (ok bool, r Risk, slack float64, full bool) {
	n := len(buf)
	mh := moved(plan, ev.current) * float64(ev.econ.Horizon)
	lim := ev.limits
	downFloor, hasDown := lim.DownsideFloorFor(mh)
	cvarFloor, hasCVaR := lim.CVaRFloorFor(mh)
	for lo := 0; lo < n; lo += chunk {
		hi := min(n, lo+chunk)
		ev.econ.Gains(buf[lo:hi], window{ev.resp, lo, hi}, plan, ev.current)
		if quick && hi < n && certainFail(buf[:hi], n, lim, downFloor, hasDown, cvarFloor, hasCVaR) {
			// The slack of the draws seen estimates the slack of all; it is
			// a failure, so the estimate is held below zero.
			r, sorted := measureSorted(buf[:hi], lim, mh/float64(ev.econ.Horizon), ev.econ.Horizon)
			return false, Risk{}, min(slackOf(r, sorted, lim), -1e-9*(math.Abs(r.ExpectedGain)+1)), false
		}
	}
	r, sorted := measureSorted(buf, lim, mh/float64(ev.econ.Horizon), ev.econ.Horizon)
	return len(breaches(r, lim)) == 0, r, slackOf(r, sorted, lim), true
}

// slackOf is the smallest margin, in money, by which r meets a limit
// (negative: the largest shortfall). For the probability of loss it is the
// order statistic x_(floor(p·n)+1) of the gains, which is at least 0 exactly
// when no more than p·n gains are losses. Every term is continuous in the
// step, which lets the search interpolate.
func slackOf(r Risk, sorted []float64, lim policies.Risk) float64 {
	s := math.Inf(1)
	if j := int(math.Floor(lim.MaxLossProbability * float64(len(sorted)))); j < len(sorted) {
		s = sorted[j]
	}
	if f, ok := lim.DownsideFloorFor(r.MovedHorizon); ok {
		s = min(s, r.Downside-f)
	}
	if f, ok := lim.CVaRFloorFor(r.MovedHorizon); ok {
		s = min(s, r.CVaR-f)
	}
	if lim.MinExpectedGain != nil {
		s = min(s, r.ExpectedGain-*lim.MinExpectedGain)
	}
	return s
}

// certainFail reports whether the gains seen (of n in all) already break a
// limit however the unseen draws fall:
//   - loss: the share of losses can only grow as draws are added;
//   - downside: a sample quantile at level p of the types sluice uses lies
//     at or below the order statistic x_(floor(np)+2) (Hyndman & Fan: index
//     np + m with m in [0, 1]), so that many gains below the floor decide it;
//   - CVaR: the mean of the worst pn of all draws is at most the mean of the
//     worst pn of those seen.
//
// Comparisons keep a relative margin of 1e-9 so that rounding can never turn
// a pass into an early failure.
func certainFail(seen []float64, n int, lim policies.Risk, downFloor float64, hasDown bool, cvarFloor float64, hasCVaR bool) bool {
	var neg int
	for _, g := range seen {
		if g < 0 {
			neg++
		}
	}
	if float64(neg)/float64(n) > lim.MaxLossProbability {
		return true
	}
	margin := func(f float64) float64 { return f - 1e-9*(math.Abs(f)+1) }
	if hasDown {
		need := int(math.Floor(float64(n)*lim.DownsideLevel)) + 2
		var below int
		f := margin(downFloor)
		for _, g := range seen {
			if g < f {
				below++
			}
		}
		if need <= n && below >= need {
			return true
		}
	}
	if mass := lim.CVaRLevel * float64(n); hasCVaR && float64(len(seen)) >= mass+1 {
		s := sample.Sorted(seen)
		whole := int(math.Floor(mass))
		var tail float64
		for _, g := range s[:whole] {
			tail += g
		}
		tail += (mass - float64(whole)) * s[whole]
		if tail/mass < margin(cvarFloor) {
			return true
		}
	}
	return false
}

// window is the draws lo..hi−1 of a Response.
type window struct {
	optimize.Response
	lo, hi int
}

func (w window) NumDraws() int { return w.hi - w.lo }
func (w window) Eval(d, k int, x float64) (float64, float64) {
	return w.Response.Eval(w.lo+d, k, x)
}

// memo is a Response that answers R_dk(c_k) from a table filled once.
type memo struct {
	inner   optimize.Response
	at      []float64 // c_k
	r, dr   []float64 // [d*K+k]
	nd, nch int
}

func newMemo(inner optimize.Response, c []float64) *memo {
	nd, nch := inner.NumDraws(), inner.NumChannels()
	m := &memo{inner: inner, at: c, r: make([]float64, nd*nch), dr: make([]float64, nd*nch), nd: nd, nch: nch}
	for d := range nd {
		for k := range nch {
			m.r[d*nch+k], m.dr[d*nch+k] = inner.Eval(d, k, c[k])
		}
	}
	return m
}

func (m *memo) NumDraws() int    { return m.nd }
func (m *memo) NumChannels() int { return m.nch }

func (m *memo) Eval(d, k int, w float64) (float64, float64) {
	if w == m.at[k] {
		return m.r[d*m.nch+k], m.dr[d*m.nch+k]
	}
	return m.inner.Eval(d, k, w)
}

// pz turns a negative zero into zero.
func pz(x float64) float64 {
	if x == 0 {
		return 0
	}
	return x
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
