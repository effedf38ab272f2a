package optimize

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"

	"sluice/internal/sample"
)

// Problem is an allocation to solve: choose the weekly spend per channel that
// maximizes Objective over the draws of Response, within Constraints.
type Problem struct {
	// Response gives R_dk(w) and dR_dk/dw for every draw d and channel k.
	Response Response
	// Point, when not nil, is the point fit as a one-draw Response; its
	// optimum is one of the starts.
	Point Response
	// Economics turns KPI into money; Horizon must equal Constraints.Horizon.
	Economics Economics
	// Constraints list the channels in Response's order; each channel's
	// Current is the status quo.
	Constraints Constraints
	Objective   Objective
}

// Settings say how to solve. The zero value is ready to use.
type Settings struct {
	// RandomStarts is the number of seeded random feasible starts added to
	// the fixed ones (status quo, point optimum, mean optimum, box center).
	// Zero means 4; negative means none.
	RandomStarts int
	// Seed seeds the random starts; it is recorded in Result.Seed. Zero is
	// a seed like any other.
	Seed uint64
	// MaxIterations bounds the quasi-Newton steps of each local solve.
	// Zero means 200.
	MaxIterations int
	// StepTolerance: a local solve has converged when no channel's step
	// exceeds this share of the mean weekly spend per free channel. Zero
	// means 1e-9.
	StepTolerance float64
	// KKTTolerance is the largest violation of the optimality conditions,
	// in net ROI (currency per currency spent), that the KKT check accepts.
	// Zero means 1e-4.
	KKTTolerance float64
	// Smoothing is the final smoothing width of the quantile and CVaR
	// objectives as a share of the total budget; the solves go down to it
	// from 1e-2 a decade at a time. Zero means 1e-5.
	Smoothing float64
	// ScreenDraws: when there are more than twice as many draws, every
	// start is first solved on this many evenly spread draws, and only the
	// best distinct optima are then polished on all draws. Zero means 64,
	// or 5/Level for CVaR and 10/min(Level, 1−Level) for the quantile when
	// that is larger; negative means no screening.
	ScreenDraws int
	// Polish is the largest number of distinct screened optima polished on
	// all draws; only those within three standard errors of the best
	// screened one are. Zero means 3.
	Polish int
	// AgreeTolerance: two optima are the same when no channel differs by
	// more than this share of the mean weekly spend per free channel. Zero
	// means 1e-3.
	AgreeTolerance float64
	// Workers is the number of goroutines the draws are spread over; the
	// result does not depend on it. Zero means runtime.GOMAXPROCS(0).
	Workers int
	// Progress, when not nil, is called after each local solve.
	Progress func(StartReport)
}

func (s Settings) withDefaults() Settings {
	if s.RandomStarts == 0 {
		s.RandomStarts = 4
	}
	if s.MaxIterations <= 0 {
		s.MaxIterations = 200
	}
	if s.StepTolerance <= 0 {
		s.StepTolerance = 1e-9
	}
	if s.KKTTolerance <= 0 {
		s.KKTTolerance = 1e-4
	}
	if s.Smoothing <= 0 {
		s.Smoothing = 1e-5
	}
	if s.Polish <= 0 {
		s.Polish = 3
	}
	if s.AgreeTolerance <= 0 {
		s.AgreeTolerance = 1e-3
	}
	if s.Workers <= 0 {
		s.Workers = runtime.GOMAXPROCS(0)
	}
	return s
}

// Result is what came out.
type Result struct {
	Status    Status    // why the solve of the best start stopped
	Objective Objective // what was maximized
	Proposed  []float64 // weekly spend per channel
	Channels  []ChannelResult
	// Value is the objective at the proposal, computed exactly over all
	// draws; ValueAtCurrent the same at the status quo.
	Value, ValueAtCurrent float64
	// Surrogate is the smoothed objective the solver maximized (equal to
	// Value for the expected objective).
	Surrogate float64
	// ExpectedGain is the mean over draws of Economics.Gains: the value
	// the move adds against the status quo.
	ExpectedGain float64
	// Spend is the total spend of the proposal over the horizon.
	Spend float64
	KKT   KKT
	// Starts reports every start; Agreed of them ended at the proposal,
	// and Distinct optima were found among the polished ones.
	Starts   []StartReport
	Agreed   int
	Distinct int
	Seed     uint64
	// Evaluations counts plans evaluated over all draws, ScreenEvaluations
	// those evaluated over the screening draws only; DrawEvaluations counts
	// plans evaluated under one draw (calls of Economics.Value) in all, the
	// measure of the work done.
	Evaluations, ScreenEvaluations, DrawEvaluations int
}

// ChannelResult is one channel of a Result. MROI figures are means over the
// draws of Margin·ValuePerKPI·(dR/dw)/Horizon, the currency the last unit
// of spend returns (Economics.MarginalROI).
type ChannelResult struct {
	Name                      string
	Current, Proposed, Change float64 // weekly spend
	Lower, Upper              float64 // the box
	MROICurrent, MROIProposed float64
}

// StartReport is the outcome of one start.
type StartReport struct {
	Name       string
	Screened   float64 // objective reached on the screening draws (all draws when there was no screening)
	Polished   bool    // solved again on all draws
	Objective  float64 // objective reached on all draws; NaN when not polished
	Agrees     bool    // ended at the proposal
	Status     Status
	Iterations int
}

// Solve finds the plan that maximizes p.Objective. It returns an error
// wrapping ErrInfeasible when the constraints cannot all hold.
//
// The objective is not concave when Hill curves are S-shaped, so Solve
// starts from several feasible points — the status quo, the point fit's
// optimum (when Problem.Point is set), for the expected objective the exact
// optimum of a budget grid (gridStart), for the quantile and CVaR the
// expected objective's optimum, the center of the boxes and
// Settings.RandomStarts seeded random points, each projected onto the
// feasible set — solves from each (see local), and keeps the best. With many
// draws the starts are screened on a subsample and the best distinct optima
// polished on all draws. Every iterate meets every constraint; the result is
// checked against them to 1e-9 of the budget and against the KKT conditions.
func Solve(p Problem, settings *Settings) (*Result, error) {
	var s Settings
	if settings != nil {
		s = *settings
	}
	s = s.withDefaults()
	if p.Response == nil {
		return nil, errors.New("optimize: problem has no response")
	}
	n := p.Response.NumChannels()
	if n != len(p.Constraints.Channels) {
		panic("optimize: response and constraints differ in channel count")
	}
	if p.Point != nil && p.Point.NumChannels() != n {
		panic("optimize: point response and constraints differ in channel count")
	}
	if p.Economics.Horizon != p.Constraints.Horizon {
		panic("optimize: economics and constraints differ in horizon")
	}
	e := p.Economics
	if !(e.Margin > 0) || !(e.ValuePerKPI > 0) || math.IsInf(e.Margin, 0) || math.IsInf(e.ValuePerKPI, 0) {
		return nil, fmt.Errorf("optimize: margin %v and value per KPI %v must be positive numbers", e.Margin, e.ValuePerKPI)
	}
	if p.Response.NumDraws() < 1 {
		return nil, errors.New("optimize: response has no draws")
	}
	if err := p.Objective.validate(); err != nil {
		return nil, err
	}
	cons := p.Constraints
	if err := cons.Check(); err != nil {
		return nil, err
	}
	sv := newSolver(&p, &cons, s)
	return sv.run()
}

type solver struct {
	p     *Problem
	c     *Constraints
	s     Settings
	f     *feasible
	cur   []float64
	phi   float64
	all   []int
	base  []float64 // value of the status quo under every draw
	evals int
	scr   int
	drawn int
}

func newSolver(p *Problem, c *Constraints, s Settings) *solver {
	sv := &solver{p: p, c: c, s: s, f: newFeasible(c)}
	sv.cur = make([]float64, len(c.Channels))
	for k, ch := range c.Channels {
		sv.cur[k] = ch.Current
	}
	sv.phi = c.Budget
	if !(sv.phi > 0) {
		sv.phi = float64(c.Horizon) * sum(sv.cur, complement(len(sv.cur), nil))
	}
	if !(sv.phi > 0) {
		sv.phi = 1
	}
	sv.all = make([]int, p.Response.NumDraws())
	for d := range sv.all {
		sv.all[d] = d
	}
	return sv
}

// cand is a local optimum and the starts that led to it.
type cand struct {
	starts []int
	y      []float64
	value  float64
	vals   []float64 // per-draw values at y on the draws it was found on
	B      []float64
	status Status
	iters  int
	final  *cand // its polished version
}

func (sv *solver) run() (*Result, error) {
	p, f, s := sv.p, sv.f, sv.s
	obj := p.Objective
	risk := obj.Kind != Expected

	// The status quo over all draws: its value, marginal ROI and, for the
	// risk objectives, the base of the gains.
	evAll := newEvaluator(p.Response, p.Economics, sv.all, s.Workers, risk)
	evAll.run(sv.cur)
	gradCur := make([]float64, len(sv.cur))
	evAll.mean(gradCur)
	sv.base = slices.Clone(evAll.vals)
	evAll.base = sv.base
	for d, v := range sv.base {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("optimize: the response gives draw %d a non-finite value (%v) at the status quo", d, v)
		}
	}
	valueCur := obj.exact(evAll.vals, sv.base)

	res := &Result{Objective: obj, Seed: s.Seed, ValueAtCurrent: valueCur}
	var y []float64
	var h float64
	if len(f.free) == 0 {
		res.Status = Fixed
		res.Agreed, res.Distinct = 1, 1
	} else {
		best, err := sv.multistart(res)
		if err != nil {
			return nil, err
		}
		y = best.y
		res.Status = best.status
		if risk {
			h = s.Smoothing * sv.phi
		}
	}
	w := f.toW(nil, y)
	if v, what := sv.c.violation(w); v > 1e-9*max(sv.c.Weekly(), 1) {
		return nil, fmt.Errorf("optimize: internal error: the result violates %s by %g", what, v)
	}
	evAll.run(w)
	gradObj := make([]float64, len(w))
	res.Surrogate = evAll.objective(obj, h, gradObj)
	res.Value = obj.exact(evAll.vals, sv.base)
	if math.IsNaN(res.Value) || math.IsInf(res.Value, 0) {
		return nil, fmt.Errorf("optimize: the response gives the proposal a non-finite value (%v)", res.Value)
	}
	if !risk {
		res.Surrogate = res.Value
	}
	gradMean := make([]float64, len(w))
	evAll.mean(gradMean)
	if len(f.free) > 0 {
		res.KKT = checkKKT(f, w, gradObj, sv.c.Horizon, s.KKTTolerance)
	} else {
		res.KKT = KKT{OK: true, Groups: make([]float64, len(sv.c.Groups)), Detail: "every channel is fixed by its bounds"}
	}
	res.Proposed = w
	res.ExpectedGain = sample.Mean(p.Economics.Gains(nil, p.Response, w, sv.cur))
	res.Channels = make([]ChannelResult, len(w))
	for k, ch := range sv.c.Channels {
		res.Spend += w[k]
		res.Channels[k] = ChannelResult{Name: ch.Name, Current: sv.cur[k], Proposed: w[k], Change: w[k] - sv.cur[k],
			Lower: f.lower[k], Upper: f.upper[k],
			MROICurrent: p.Economics.MarginalROI(gradCur[k]), MROIProposed: p.Economics.MarginalROI(gradMean[k])}
	}
	res.Spend *= float64(sv.c.Horizon)
	res.Evaluations = evAll.evals + sv.evals
	res.ScreenEvaluations = sv.scr
	// The grid start and the gains are counted as the draws they read.
	res.DrawEvaluations = evAll.drawn + sv.drawn + 2*len(sv.all)
	return res, nil
}

// multistart solves from every start and returns the best polished optimum.
func (sv *solver) multistart(res *Result) (*cand, error) {
	p, f, s := sv.p, sv.f, sv.s
	obj := p.Objective
	risk := obj.Kind != Expected
	sigmaTol := s.AgreeTolerance

	type start struct {
		name string
		y    []float64
	}
	var starts []start
	addStart := func(name string, w []float64) error {
		y0 := f.toY(nil, w)
		y, conflict, err := f.project(nil, y0)
		if err != nil {
			return err
		}
		if conflict != nil {
			return sv.c.conflictError(f, conflict)
		}
		for _, st := range starts {
			if dist(st.y, y) <= sigmaTol {
				return nil // the same point as an earlier start
			}
		}
		starts = append(starts, start{name, y})
		return nil
	}
	if err := addStart("status quo", sv.cur); err != nil {
		return nil, err
	}
	if p.Point != nil {
		ev := newEvaluator(p.Point, p.Economics, []int{0}, 1, false)
		ls := newLocal(f, ev, Objective{Kind: Expected}, 0, sv.phi, s.MaxIterations, s.StepTolerance)
		r := ls.solve(starts[0].y, nil)
		sv.drawn += ev.drawn
		if err := addStart("point optimum", f.toW(nil, r.y)); err != nil {
			return nil, err
		}
	}
	screen := sv.screenDraws()
	if !risk {
		draws := screen
		if draws == nil {
			draws = sv.all
		}
		if w := sv.gridStart(draws); w != nil {
			if err := addStart("grid optimum", w); err != nil {
				return nil, err
			}
		}
	} else {
		q := *p
		q.Objective = Objective{Kind: Expected}
		ss := s
		ss.Progress = nil
		mean, err := Solve(q, &ss)
		if err != nil {
			return nil, err
		}
		sv.evals += mean.Evaluations
		sv.scr += mean.ScreenEvaluations
		sv.drawn += mean.DrawEvaluations
		if err := addStart("mean optimum", mean.Proposed); err != nil {
			return nil, err
		}
	}
	S := sv.c.Weekly()
	center := make([]float64, len(sv.cur))
	box := func(k int) (float64, float64) {
		lo, hi := f.lower[k], f.upper[k]
		if math.IsInf(hi, 1) {
			hi = max(lo, S, sv.cur[k])
		}
		return lo, hi
	}
	for k := range center {
		lo, hi := box(k)
		center[k] = (lo + hi) / 2
	}
	if err := addStart("box center", center); err != nil {
		return nil, err
	}
	for r := 1; r <= s.RandomStarts; r++ {
		rng := rand.New(rand.NewPCG(s.Seed, uint64(r)))
		x := make([]float64, len(sv.cur))
		for k := range x {
			lo, hi := box(k)
			x[k] = lo + rng.Float64()*(hi-lo)
		}
		if err := addStart(fmt.Sprintf("random %d", r), x); err != nil {
			return nil, err
		}
	}

	// The smoothing widths of each phase.
	var ws []float64
	if risk {
		ws = widths(max(1e-2, s.Smoothing)*sv.phi, s.Smoothing*sv.phi)
	} else {
		ws = []float64{0}
	}
	screenWs, polishWs := ws, ws
	var evS *evaluator
	if screen != nil {
		if len(ws) > 2 {
			screenWs, polishWs = ws[:len(ws)-2], ws[len(ws)-2:]
		}
		evS = newEvaluator(p.Response, p.Economics, screen, s.Workers, risk)
		evS.base = make([]float64, len(screen))
		for i, d := range screen {
			evS.base[i] = sv.base[d]
		}
	}
	evF := newEvaluator(p.Response, p.Economics, sv.all, s.Workers, risk)
	evF.base = sv.base
	defer func() {
		sv.evals += evF.evals
		sv.drawn += evF.drawn
		if evS != nil {
			sv.scr += evS.evals
			sv.drawn += evS.drawn
		}
	}()

	// stage solves through the widths, carrying the quasi-Newton matrix.
	stage := func(ev *evaluator, ws []float64, y, B []float64) *cand {
		c := &cand{y: y, B: B}
		xtol := s.StepTolerance
		if ev != evF {
			xtol = max(xtol, screenTolerance) // the polish refines it
		}
		for _, h := range ws {
			ls := newLocal(f, ev, obj, h, sv.phi, s.MaxIterations, xtol)
			r := ls.solve(c.y, c.B)
			c.y, c.value, c.B, c.status = r.y, r.value, r.B, r.status
			c.iters += r.iters
		}
		c.vals = slices.Clone(ev.vals)
		return c
	}
	first := evF
	firstWs := ws
	if screen != nil {
		first, firstWs = evS, screenWs
	}
	// Screening solves stop early, so the same optimum may be reached a
	// little apart along flat directions.
	mergeTol := sigmaTol
	if screen != nil {
		mergeTol *= 10
	}
	reports := make([]StartReport, len(starts))
	var cands []*cand
	for i, st := range starts {
		c := stage(first, firstWs, st.y, nil)
		reports[i] = StartReport{Name: st.name, Screened: c.value, Objective: math.NaN(), Status: c.status, Iterations: c.iters}
		if screen == nil {
			reports[i].Polished, reports[i].Objective = true, c.value
		}
		if s.Progress != nil {
			s.Progress(reports[i])
		}
		merged := false
		for _, o := range cands {
			if dist(o.y, c.y) <= mergeTol {
				o.starts = append(o.starts, i)
				merged = true
				break
			}
		}
		if !merged {
			c.starts = []int{i}
			cands = append(cands, c)
		}
	}
	slices.SortStableFunc(cands, func(a, b *cand) int { return cmpDesc(a.value, b.value) })
	if screen != nil {
		// Polish the best screened optimum and those not clearly worse.
		top := cands[0]
		for _, c := range cands {
			if c != top && !withinNoise(c, top) {
				continue
			}
			c.final = stage(evF, polishWs, c.y, c.B)
			for _, i := range c.starts {
				reports[i].Polished, reports[i].Objective = true, c.final.value
				reports[i].Iterations += c.final.iters
				reports[i].Status = c.final.status
			}
			if s.Progress != nil {
				s.Progress(reports[c.starts[0]])
			}
			polished := 0
			for _, o := range cands {
				if o.final != nil {
					polished++
				}
			}
			if polished >= s.Polish {
				break
			}
		}
	} else {
		for _, c := range cands {
			c.final = c
		}
	}
	var best *cand
	var finals []*cand
	for _, c := range cands {
		if c.final == nil {
			continue
		}
		if best == nil || c.final.value > best.value {
			best = c.final
		}
		same := false
		for _, o := range finals {
			if dist(o.y, c.final.y) <= sigmaTol {
				same = true
			}
		}
		if !same {
			finals = append(finals, c.final)
		}
	}
	for _, c := range cands {
		if c.final != nil && dist(c.final.y, best.y) <= sigmaTol {
			for _, i := range c.starts {
				reports[i].Agrees = true
				res.Agreed++
			}
		}
	}
	res.Starts = reports
	res.Distinct = len(finals)
	return best, nil
}

// screenTolerance is the step tolerance of the screening solves: they only
// need to find which optimum a start leads to.
const screenTolerance = 1e-5

// screenDraws returns the evenly spread draws to screen the starts on, or
// nil when all draws are few enough.
func (sv *solver) screenDraws() []int {
	n := len(sv.all)
	k := sv.s.ScreenDraws
	if k < 0 {
		return nil
	}
	if k == 0 {
		// Enough draws that the screened tail holds several: the CVaR
		// averages its tail, the quantile reads one order statistic.
		k = 64
		switch o := sv.p.Objective; o.Kind {
		case CVaR:
			k = max(k, int(math.Ceil(5/o.Level)))
		case Quantile:
			k = max(k, int(math.Ceil(10/min(o.Level, 1-o.Level))))
		}
	}
	if n <= 2*k {
		return nil
	}
	out := make([]int, k)
	for i := range out {
		out[i] = int((float64(i) + 0.5) * float64(n) / float64(k))
	}
	return out
}

// withinNoise says whether candidate c's screened value is within three
// standard errors of the best one's: the mean over the screening draws of
// the per-draw difference of values is not clearly negative.
func withinNoise(c, best *cand) bool {
	n := len(c.vals)
	diff := make([]float64, n)
	for d := range diff {
		diff[d] = c.vals[d] - best.vals[d]
	}
	mu := sample.Mean(diff)
	var ss float64
	for _, v := range diff {
		ss += (v - mu) * (v - mu)
	}
	se := math.Sqrt(ss / float64(max(n-1, 1)) / float64(n))
	return c.value >= best.value-3*se-1e-12*math.Abs(best.value)
}

func dist(a, b []float64) float64 {
	var m float64
	for i := range a {
		m = max(m, math.Abs(a[i]-b[i]))
	}
	return m
}

func cmpDesc(a, b float64) int {
	switch {
	case a > b:
		return -1
	case a < b:
		return 1
	}
	return 0
}
