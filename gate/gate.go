// Package gate reviews a proposed reallocation against the response draws,
// the validation evidence and a written policy (package policies), and
// sizes every move to what the evidence supports: it approves the proposal,
// downsizes it to a smaller budget-consistent plan that meets the policy, or
// refuses it, and says who must sign and why.
//
// The definitions are the README's ("The model", "The plan file",
// "Policies and the gate"). The gain of a move from the status quo c to a
// plan w is Value(w) − Value(c) under each draw (optimize.Economics);
// its distribution gives the probability of loss (share of draws below
// zero), the downside quantile (Hyndman–Fan type 8, package internal/sample),
// the lower-tail CVaR and the expected gain. The safe step of a channel is
// the largest τ ∈ [0,1] of its proposed change Δ_k, funded by (or returned
// to) the channels that move the other way in proportion to their change,
// whose gains meet the policy's risk limits and whose spend stays inside
// the support guard and any evidence cap. The changes that fund a step are
// those of the proposal held inside every channel's guards (each channel
// clipped to its own guards, then increases and cuts matched again), so a
// channel's funding never pushes another channel past its guard and a cap
// on one channel does not shrink the steps of channels it does not fund.
//
// Steps are searched on a grid, then narrowed (Settings): the gain need not
// be monotone in the step, so the grid is scanned from the full step down
// and the bracket between the last passing and the first failing point above
// it is narrowed — by bisection accelerated with false position on the
// limits' slack — until it is narrower than Settings.Tolerance (1e-4 in τ by
// default): the step reported passes, and the end of its bracket, at most
// the tolerance further, fails. Gains are evaluated with Economics.Gains;
// a probe that is certain to fail stops early (see passes), which changes no
// answer.
package gate

import (
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"

	"sluice/optimize"
	"sluice/policies"
	"sluice/validation"
)

// SupportRange is the spend a channel's data has seen: the lowest and the
// highest 4-week average of weekly spend. A channel with no history to
// guard can be given {0, +Inf}.
type SupportRange struct {
	Low  float64 `json:"low"`
	High float64 `json:"high"`
}

// Waiver lifts a warning or failed check, in the name of a role. The
// policy says which roles may waive which checks.
type Waiver struct {
	Check string `json:"check"` // the check's name; lifts every check of that name
	Role  string `json:"role"`
}

// Review is the problem: a proposal to move weekly spend from Current to
// Proposed, the draws that judge it, and the policy.
type Review struct {
	Channels          []string
	Current, Proposed []float64 // weekly spend per channel: status quo c and proposal w
	Response          optimize.Response
	Economics         optimize.Economics
	Support           []SupportRange // per channel, for the support guard
	Evidence          validation.Evidence
	Waivers           []Waiver
	Policy            *policies.Policy
}

// Settings say how the step searches run.
type Settings struct {
	// GridSteps is the number of grid intervals scanned on [0, top] before
	// bisecting; zero means 10.
	GridSteps int
	// Tolerance is the width, in step fraction τ, of the final bracket of a
	// search: the reported step passes and a step Tolerance larger fails (at
	// the bracket's failing end). Zero means 1e-4.
	Tolerance float64
	// Workers is the number of channels searched at once; zero means
	// runtime.GOMAXPROCS(0). The result does not depend on it.
	Workers int
}

// DefaultGridSteps and DefaultTolerance are what zero Settings fields mean.
const (
	DefaultGridSteps = 10
	DefaultTolerance = 1e-4
)

func (s Settings) withDefaults() Settings {
	if s.GridSteps <= 0 {
		s.GridSteps = DefaultGridSteps
	}
	if s.Tolerance <= 0 {
		s.Tolerance = DefaultTolerance
	}
	if s.Workers <= 0 {
		s.Workers = runtime.GOMAXPROCS(0)
	}
	return s
}

// Verdict is the gate's answer.
type Verdict string

const (
	Approve  Verdict = "approve"  // the whole proposal passes
	Downsize Verdict = "downsize" // a smaller, budget-consistent plan passes
	Refuse   Verdict = "refuse"   // nothing meaningful passes, or the evidence refuses
)

// Move is one channel's part of the decision. Money is per week.
type Move struct {
	Channel  string  `json:"channel"`
	Current  float64 `json:"current"`
	Proposed float64 `json:"proposed"`
	Approved float64 `json:"approved"`
	// SafeStep is the channel's safe step τ, the fraction of its proposed
	// change that passes on its own; SafeStepPerWeek is τ·(proposed − current).
	SafeStep        float64  `json:"safe_step"`
	SafeStepPerWeek float64  `json:"safe_step_per_week"`
	Reasons         []string `json:"reasons"`
}

// Risks holds the risk of the proposal and of the approved plan.
type Risks struct {
	Proposed Risk `json:"proposed"`
	Approved Risk `json:"approved"`
}

// Search records how the step searches ran.
type Search struct {
	GridSteps int     `json:"grid_steps"`
	Tolerance float64 `json:"tolerance"`
}

// Decision is the result of a review.
type Decision struct {
	Verdict          Verdict     `json:"verdict"`
	Reasons          []string    `json:"reasons"` // about the decision as a whole
	Policy           string      `json:"policy"`  // the policy's name
	Moves            []Move      `json:"moves"`
	Risk             Risks       `json:"risk"`
	Checks           []CheckUse  `json:"checks"`
	Waivers          []WaiverUse `json:"waivers"`
	SignoffsRequired []Signoff   `json:"signoffs_required"`
	ApprovedPlan     []float64   `json:"approved_plan"` // weekly spend per channel
	// PlanScale is the uniform factor applied to the matched safe steps so
	// that the plan as a whole passes (1 when no scaling was needed).
	PlanScale float64 `json:"plan_scale"`
	Search    Search  `json:"search"`
	// Draws says which draws judged the moves; the caller fills it (the
	// gate judges whatever Review.Response holds).
	Draws DrawUse `json:"draws_judged"`
}

// DrawUse records how the draws were shared between the allocator and the
// gate, so the record shows the optimiser's curse was avoided.
type DrawUse struct {
	Allocated int    `json:"allocator"` // draws the allocator optimised over
	Judged    int    `json:"gate"`      // draws the gate judged
	Rule      string `json:"rule"`
}

// Run reviews r. Errors report problems with the review's data; slices of
// the wrong length panic.
func Run(r Review, s Settings) (*Decision, error) {
	if err := r.check(); err != nil {
		return nil, err
	}
	s = s.withDefaults()
	pol := r.Policy
	nch := len(r.Channels)
	c, w := r.Current, r.Proposed
	delta := make([]float64, nch)
	for k := range delta {
		delta[k] = w[k] - c[k]
	}

	evid, err := reviewEvidence(r)
	if err != nil {
		return nil, err
	}
	caps := guard(r, evid, delta)
	held := holdToGuards(delta, caps)

	ev := newEvaluator(r)
	proposedRisk := ev.risk(make([]float64, r.Response.NumDraws()), w)
	steps := safeSteps(ev, r, delta, held, caps, s)

	d := &Decision{
		Policy:  pol.Name,
		Checks:  append([]CheckUse{}, evid.checks...),
		Waivers: append([]WaiverUse{}, evid.waivers...),
		Search:  Search{GridSteps: s.GridSteps, Tolerance: s.Tolerance},
		Moves:   make([]Move, nch),
	}
	for k := range d.Moves {
		d.Moves[k] = Move{Channel: r.Channels[k], Current: c[k], Proposed: w[k],
			SafeStep: steps[k].tau, SafeStepPerWeek: pz(steps[k].tau * delta[k])}
	}
	d.Risk.Proposed = proposedRisk

	var total float64
	for _, v := range c {
		total += v
	}
	minMove := pol.MinMove.Threshold(total)
	proposedMoved := moved(w, c)
	guarded := false
	for k := range delta {
		guarded = guarded || held[k] != delta[k]
	}
	proposalBreaks := breaches(proposedRisk, limitsOf(r))

	var approved []float64
	refused := "" // why the decision is refused, for the moves
	switch {
	case len(evid.refusals) > 0:
		d.Reasons = append(d.Reasons, evid.refusals...)
		refused = evid.refusals[0]
	case proposedMoved == 0:
		refused = "the proposal moves no money; there is nothing to approve"
	case proposedMoved < minMove:
		refused = fmt.Sprintf("the proposal moves only %s, less than the %s the policy counts as a meaningful move", perWeek(proposedMoved), perWeek(minMove))
	case !guarded && len(proposalBreaks) == 0:
		d.Verdict = Approve
		approved = slices.Clone(w)
		d.PlanScale = 1
	default:
		if len(proposalBreaks) > 0 {
			d.Reasons = append(d.Reasons, fmt.Sprintf("the proposal as a whole %s", clauses(proposalBreaks, r.Economics.Horizon, proposedRisk)))
		}
		approved = downsize(ev, r, d, delta, held, caps, steps, s)
		switch m := moved(approved, c); {
		case m == 0:
			refused = "no step of the proposal meets the policy"
		case m < minMove:
			refused = fmt.Sprintf("the largest plan that meets the policy moves %s, less than the %s the policy counts as a meaningful move",
				perWeek(m), perWeek(minMove))
		default:
			d.Verdict = Downsize
			var heldBack []string
			for k, cc := range caps {
				if len(cc.reasons) > 0 {
					heldBack = append(heldBack, r.Channels[k])
				}
			}
			if len(heldBack) > 0 {
				d.Reasons = append(d.Reasons, fmt.Sprintf("the moves of %s are held back by the support guard or the evidence; each move says why", joinAnd(heldBack)))
			}
		}
	}
	if refused != "" {
		d.Verdict = Refuse
		if len(evid.refusals) == 0 {
			d.Reasons = append(d.Reasons, refused)
		}
		approved = slices.Clone(c)
		d.PlanScale = 0
		for k := range d.Moves {
			if delta[k] != 0 {
				d.Moves[k].Reasons = append(d.Moves[k].Reasons, "refused: "+refused)
			}
		}
	}
	d.Reasons = append(d.Reasons, evid.warnings...)
	for k := range d.Moves {
		d.Moves[k].Approved = approved[k]
		if d.Moves[k].Reasons == nil {
			d.Moves[k].Reasons = []string{}
		}
	}
	d.ApprovedPlan = approved
	d.Risk.Approved = ev.risk(make([]float64, r.Response.NumDraws()), approved)
	d.SignoffsRequired = RequiredSignoffs(pol, d, r.Support, r.Economics.Horizon)
	if d.Reasons == nil {
		d.Reasons = []string{}
	}
	return d, nil
}

// channelCap is how far a channel may move under the support guard and the
// evidence caps: frac of its proposed change, with the reasons when < 1.
type channelCap struct {
	lo, hi  float64 // allowed weekly spend
	frac    float64
	reasons []string
}

// guard returns each channel's allowed band of spend. The support guard
// allows [low_multiple × Low, high_multiple × High], widened to include the
// current spend (the status quo is never outside its own guard); an
// evidence cap intersects it with the exploration band around current.
func guard(r Review, evid *evidenceOutcome, delta []float64) []channelCap {
	pol := r.Policy
	out := make([]channelCap, len(r.Channels))
	for k, name := range r.Channels {
		ck, wk := r.Current[k], r.Proposed[k]
		sLo := pol.Support.LowMultiple * r.Support[k].Low
		sHi := pol.Support.HighMultiple * r.Support[k].High
		cc := channelCap{lo: min(sLo, ck), hi: max(sHi, ck)}
		if wk > cc.hi {
			cc.reasons = append(cc.reasons, fmt.Sprintf("the proposed %s for %s is beyond what the data supports: the policy trusts up to %s × its highest 4-week average seen (%s), that is %s",
				perWeek(wk), name, trimFloat(pol.Support.HighMultiple), perWeek(r.Support[k].High), perWeek(sHi)))
		}
		if wk < cc.lo {
			cc.reasons = append(cc.reasons, fmt.Sprintf("the proposed %s for %s is below what the data supports: the policy trusts down to %s × its lowest 4-week average seen (%s), that is %s",
				perWeek(wk), name, trimFloat(pol.Support.LowMultiple), perWeek(r.Support[k].Low), perWeek(sLo)))
		}
		if evid.capped(k) {
			b := pol.Evidence.ExplorationBand
			eLo, eHi := ck*(1-b), ck*(1+b)
			if wk > eHi || wk < eLo {
				for _, why := range append(slices.Clone(evid.capChan[k]), evid.capAll...) {
					cc.reasons = append(cc.reasons, fmt.Sprintf("%s (%s to %s for %s)", why, money(eLo), perWeek(eHi), name))
				}
			}
			cc.lo, cc.hi = max(cc.lo, eLo), min(cc.hi, eHi)
		}
		if len(evid.holdChan[k]) > 0 {
			if wk != ck {
				cc.reasons = append(cc.reasons, evid.holdChan[k]...)
			}
			cc.lo, cc.hi = ck, ck
		}
		switch {
		case delta[k] > 0:
			cc.frac = min(1, max(0, (cc.hi-ck)/delta[k]))
		case delta[k] < 0:
			cc.frac = min(1, max(0, (cc.lo-ck)/delta[k]))
		default:
			cc.frac = 1
		}
		out[k] = cc
	}
	return out
}

func trimFloat(x float64) string { return fmt.Sprint(x) }

// matchSides scales down, in place, the side of the change a (increases or
// cuts) that is larger than the proposal's ratio of cuts to increases,
// down/up, allows, so that the cuts of a are down/up times its increases. It
// returns the side scaled (+1 increases, −1 cuts, 0 none) and the factor.
// A proposal that only increases or only cuts has nothing to match.
func matchSides(a []float64, up, down float64) (side int, f float64) {
	if up == 0 || down == 0 {
		return 0, 1
	}
	var aUp, aDown float64
	for _, v := range a {
		if v > 0 {
			aUp += v
		} else {
			aDown -= v
		}
	}
	ratio := down / up
	if math.Abs(aDown-ratio*aUp) <= 1e-12*max(aDown, ratio*aUp) {
		return 0, 1 // matched up to rounding
	}
	switch {
	case aDown > ratio*aUp:
		side, f = -1, ratio*aUp/aDown
	case aDown < ratio*aUp:
		side, f = 1, aDown/(ratio*aUp)
	default:
		return 0, 1
	}
	for k, v := range a {
		if v != 0 && (v > 0) == (side > 0) {
			a[k] = v * f
		}
	}
	return side, f
}

// sides returns the sums of the increases and of the cuts of delta.
func sides(delta []float64) (up, down float64) {
	for _, d := range delta {
		if d > 0 {
			up += d
		} else {
			down -= d
		}
	}
	return up, down
}

// holdToGuards returns the proposal's change held inside every channel's
// guards and then matched (matchSides), the largest change in the
// proposal's direction that the guards allow. The safe steps are measured
// along it, so a channel's funding never pushes another channel past its
// guard.
func holdToGuards(delta []float64, caps []channelCap) []float64 {
	held := make([]float64, len(delta))
	for k := range delta {
		held[k] = caps[k].frac * delta[k]
	}
	up, down := sides(delta)
	matchSides(held, up, down)
	return held
}

// stepResult is the outcome of one channel's safe-step search.
type stepResult struct {
	tau    float64 // the safe step
	top    float64 // the largest step the guards allow
	fail   float64 // failing end of the final bracket, < 0 if tau == top
	atTop  Risk    // risk of the step top
	atFail Risk    // risk at fail
	others []int   // channels funding (or receiving) the move
}

// direction returns channel k's own move along the change held: held_k on
// k and, on each channel j moving the other way, its share of funding (or
// receiving) it. With S_up and S_down the sums of increases and cuts and
// M = min(S_up, S_down), the matched part of held_k is |held_k|·M/S_same,
// taken from channel j in proportion held_j/S_other; the rest of held_k is
// new (or returned) budget.
func direction(held []float64, k int) (m []float64, others []int) {
	up, down := sides(held)
	same, other := up, down
	if held[k] < 0 {
		same, other = down, up
	}
	m = make([]float64, len(held))
	m[k] = held[k]
	if other == 0 {
		return m, nil
	}
	share := math.Abs(held[k]) * min(up, down) / same / other
	for j, hj := range held {
		if hj != 0 && (hj > 0) != (held[k] > 0) {
			m[j] = share * hj
			others = append(others, j)
		}
	}
	return m, others
}

// safeSteps searches every channel's safe step, Workers channels at a time.
func safeSteps(ev *evaluator, r Review, delta, held []float64, caps []channelCap, s Settings) []stepResult {
	out := make([]stepResult, len(delta))
	var wg sync.WaitGroup
	next := make(chan int)
	for range min(s.Workers, len(delta)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			buf := make([]float64, r.Response.NumDraws())
			plan := make([]float64, len(delta))
			for k := range next {
				out[k] = safeStep(ev, delta, held, caps, k, buf, plan, s)
			}
		}()
	}
	for k := range delta {
		next <- k
	}
	close(next)
	wg.Wait()
	return out
}

// safeStep searches τ ∈ [0, held_k/Δ_k]: channel k moves τ·Δ_k and the
// others their share of it along the held change.
func safeStep(ev *evaluator, delta, held []float64, caps []channelCap, k int, buf, plan []float64, s Settings) stepResult {
	res := stepResult{tau: 1, top: 1, fail: -1}
	if delta[k] == 0 {
		return res
	}
	res.top = held[k] / delta[k]
	if held[k] == 0 {
		res.tau = 0
		return res
	}
	m, others := direction(held, k)
	res.others = others
	for j := range m {
		m[j] /= res.top // per unit of τ, so that m[k] = Δ_k
	}
	full := map[float64]Risk{} // risks of the steps evaluated in full
	at := func(t float64) []float64 {
		for j := range plan {
			// Inside the guards despite rounding.
			plan[j] = min(max(ev.current[j]+t*m[j], caps[j].lo), caps[j].hi)
		}
		return plan
	}
	pass := func(t float64, quick bool) (bool, float64) {
		ok, rk, slack, all := ev.passes(buf, at(t), quick)
		if all {
			full[t] = rk
		}
		return ok, slack
	}
	riskAt := func(t float64) Risk {
		if rk, ok := full[t]; ok {
			return rk
		}
		return ev.risk(buf, at(t))
	}
	res.tau, res.fail = largestPassing(res.top, s.GridSteps, s.Tolerance, pass)
	if res.fail >= 0 {
		res.atTop, res.atFail = riskAt(res.top), riskAt(res.fail)
	}
	return res
}

// downsize builds the approved plan from the safe steps: each channel moves
// its safe step; the side (increases or cuts) that moves more than the
// proposal's ratio of cuts to increases allows is scaled down to match the
// other (matchSides), so the plan changes the total budget in the same
// proportion to the money it moves as the proposal does (a budget-neutral
// proposal gives a budget-neutral plan); the whole is then scaled uniformly
// by the largest factor whose gains meet the limits. It writes the moves'
// reasons into d.
func downsize(ev *evaluator, r Review, d *Decision, delta, held []float64, caps []channelCap, steps []stepResult, s Settings) []float64 {
	nch := len(delta)
	c := r.Current
	h := r.Economics.Horizon
	up, down := sides(delta)
	neutral := math.Abs(up-down) <= 1e-12*max(up, down)
	balance := func(side int) string {
		why := "increases are held to what the cuts that pass can fund"
		if side < 0 {
			why = "cuts are held to what the increases that pass need"
		}
		if neutral {
			return why + ", so the total budget stays as proposed"
		}
		return why + fmt.Sprintf(", in the proposal's ratio of cuts to increases (%s)", pct(down/up))
	}
	for k := range delta {
		if delta[k] == 0 {
			continue
		}
		st := steps[k]
		mv := &d.Moves[k]
		mv.Reasons = append(mv.Reasons, caps[k].reasons...)
		if held[k] != caps[k].frac*delta[k] {
			side := 1
			if delta[k] < 0 {
				side = -1
			}
			mv.Reasons = append(mv.Reasons, fmt.Sprintf("held to a change of %s because the channels on the other side are capped: %s",
				perWeek(math.Abs(held[k])), balance(side)))
		}
		if st.tau < st.top {
			mv.Reasons = append(mv.Reasons, riskReason(r, delta, k, st))
		}
	}

	// The plan: every channel moves its safe step, increases and cuts matched.
	a := make([]float64, nch)
	for k := range delta {
		a[k] = steps[k].tau * delta[k]
	}
	before := slices.Clone(a)
	side, _ := matchSides(a, up, down)
	for k := range a {
		if a[k] != before[k] {
			d.Moves[k].Reasons = append(d.Moves[k].Reasons, fmt.Sprintf("reduced from a change of %s to %s: %s",
				perWeek(math.Abs(before[k])), perWeek(math.Abs(a[k])), balance(side)))
		}
	}

	plan := make([]float64, nch)
	buf := make([]float64, r.Response.NumDraws())
	build := func(t float64) []float64 {
		for k := range plan {
			// Between current and proposed despite rounding.
			plan[k] = min(max(c[k]+t*a[k], min(c[k], r.Proposed[k])), max(c[k], r.Proposed[k]))
		}
		return plan
	}
	pass := func(t float64, quick bool) (bool, float64) {
		ok, _, slack, _ := ev.passes(buf, build(t), quick)
		return ok, slack
	}
	if !slices.ContainsFunc(a, func(x float64) bool { return x != 0 }) {
		d.PlanScale = 1
		return slices.Clone(c)
	}
	scale, fail := largestPassing(1, s.GridSteps, s.Tolerance, pass)
	d.PlanScale = scale
	if fail >= 0 {
		rf := ev.risk(buf, build(fail))
		why := fmt.Sprintf("together the channels' safe steps break the policy: the combined plan %s; every move was scaled to %s of its step",
			clauses(breaches(rf, ev.limits), h, rf), pct(scale))
		d.Reasons = append(d.Reasons, why)
		for k := range a {
			if a[k] != 0 {
				d.Moves[k].Reasons = append(d.Moves[k].Reasons, why)
			}
		}
	}
	return slices.Clone(build(scale))
}

// riskReason says why channel k's step stops at st.tau.
func riskReason(r Review, delta []float64, k int, st stepResult) string {
	lim := limitsOf(r)
	h := r.Economics.Horizon
	names := make([]string, len(st.others))
	for i, j := range st.others {
		names[i] = r.Channels[j]
	}
	binding := breaches(st.atFail, lim)
	atTop := breaches(st.atTop, lim)
	allAtTop := len(binding) > 0
	for _, b := range binding {
		if !slices.ContainsFunc(atTop, func(t breach) bool { return t.limit == b.limit }) {
			allAtTop = false
		}
	}
	tail := fmt.Sprintf("; at most %s meets the policy", perWeek(math.Abs(st.tau*delta[k])))
	if st.tau == 0 {
		tail = "; no step of this move meets the policy"
	}
	if allAtTop {
		phrase := movePhrase(r.Channels[k], st.top*delta[k], false, names)
		if st.top == 1 {
			phrase += " as proposed"
		}
		var bs []breach
		for _, b := range atTop {
			if slices.ContainsFunc(binding, func(t breach) bool { return t.limit == b.limit }) {
				bs = append(bs, b)
			}
		}
		return phrase + " " + clauses(bs, h, st.atTop) + tail
	}
	return movePhrase(r.Channels[k], st.tau*delta[k], true, names) + " " + clauses(binding, h, st.atFail) + tail
}

// check returns an error for data problems of the review and panics on
// slices of the wrong length.
func (r Review) check() error {
	n := len(r.Channels)
	if len(r.Current) != n || len(r.Proposed) != n || len(r.Support) != n {
		panic("gate: channels, current, proposed and support differ in length")
	}
	if r.Response == nil || r.Policy == nil {
		panic("gate: review without response or policy")
	}
	if r.Response.NumChannels() != n {
		panic("gate: response channel count does not match the review")
	}
	if n == 0 {
		return fmt.Errorf("gate: the review has no channels")
	}
	if r.Response.NumDraws() == 0 {
		return fmt.Errorf("gate: the response has no draws")
	}
	if r.Economics.Horizon <= 0 {
		return fmt.Errorf("gate: economics: horizon must be at least one week, got %d", r.Economics.Horizon)
	}
	seen := map[string]bool{}
	for k, name := range r.Channels {
		if name == "" || seen[name] {
			return fmt.Errorf("gate: channel %d: name %q is empty or used twice", k, name)
		}
		seen[name] = true
		for _, v := range []struct {
			what string
			x    float64
		}{{"current", r.Current[k]}, {"proposed", r.Proposed[k]}, {"support low", r.Support[k].Low}} {
			if !finite(v.x) || v.x < 0 {
				return fmt.Errorf("gate: %s: %s spend must be a finite number >= 0, got %v", name, v.what, v.x)
			}
		}
		if math.IsNaN(r.Support[k].High) || r.Support[k].High < r.Support[k].Low {
			return fmt.Errorf("gate: %s: support high %v is below support low %v", name, r.Support[k].High, r.Support[k].Low)
		}
	}
	return nil
}
