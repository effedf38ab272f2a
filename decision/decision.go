// Package decision is the one decision pipeline of sluice: from a weekly
// panel, its model design, a plan and a policy (plus, optionally, bootstrap
// draws, lift tests, earlier forecasts, a person's proposal and signed
// waivers) it fits the model, runs or reads the bootstrap, gathers the
// evidence, allocates, gates every move and forecasts the approved plan,
// and returns the content of the decision record. `sluice propose` and every
// world of `sluice rehearse` call Make, so a rehearsal rehearses exactly
// what propose decides.
//
// No optimiser's curse: the successful bootstrap replicates are split by
// their position (even positions to the allocator, odd ones to the gate and
// the forecast band), so the gain distribution the gate judges is not the
// sample the allocator optimised over. A split costs no refits; cross-fitting
// would double the allocator's work and fresh replicates the bootstrap's.
package decision

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"time"

	"sluice/gate"
	"sluice/internal/sample"
	"sluice/model"
	"sluice/optimize"
	"sluice/policies"
	"sluice/record"
	"sluice/uncertainty"
	"sluice/validation"
)

// Defaults of Settings' zero fields.
const (
	DefaultBootstrapDraws = 300 // enough for stable 5% tails on the judging half
	DefaultReplicates     = 20  // recovery panels of the validation
)

// Input is everything a decision is made from, as plain values.
type Input struct {
	Panel  *model.Panel
	Design *model.Design // built from Panel
	Plan   *optimize.Plan
	Policy *policies.Policy
	// Draws are bootstrap draws of the model on Panel; nil means Make runs
	// a moving-block bootstrap of Settings.BootstrapDraws replicates.
	Draws     *uncertainty.Draws
	Lifts     []validation.LiftTest
	Forecasts []*validation.Forecast // earlier decisions' forecasts to reconcile
	// Proposal, if not nil, is a person's weekly spend per channel to gate
	// instead of the allocator's; ProposalSource names it.
	Proposal       []float64
	ProposalSource string
	Waivers        []gate.Waiver
	// MadeWith is written into the forecast, e.g. the data's SHA-256.
	MadeWith map[string]string
}

// Settings say how large the decision's computations are. The zero value
// is usable: every zero field means the default it documents.
type Settings struct {
	Seed    uint64 // seeds the fit, the bootstrap, the recovery panels and the allocator
	Workers int    // parallel refits; 0 means 1
	// BootstrapDraws is the bootstrap size when Input.Draws is nil; 0 means
	// DefaultBootstrapDraws.
	BootstrapDraws int
	// Replicates is the recovery check's panel count; 0 means DefaultReplicates.
	Replicates int
	// EffectChoice runs the effectiveness evidence (drifting and seasonal
	// kinds) on the design before the bootstrap and, when it prefers a
	// varying effectiveness, decides on a design where the changed channels
	// drift (or follow the season), so the draws, the allocation and the
	// gate use the end-of-history (or the coming season's) effectiveness. With Input.Draws given the draws' specification is
	// kept and the record notes what the evidence preferred.
	EffectChoice bool
	// EffectReplicates is the evidence's bootstrap size; 0 means
	// validation's default (60).
	EffectReplicates int
	// Progress, if not nil, is told the stage ("effectiveness", "bootstrap", "validation")
	// and its progress.
	Progress func(stage string, done, total int)
}

func (s Settings) withDefaults() Settings {
	if s.Workers <= 0 {
		s.Workers = 1
	}
	if s.BootstrapDraws <= 0 {
		s.BootstrapDraws = DefaultBootstrapDraws
	}
	if s.Replicates <= 0 {
		s.Replicates = DefaultReplicates
	}
	return s
}

// Outcome is everything one decision computed. Record holds the decision
// record's content; the caller adds the input files (Record.Inputs), the
// tool version and then marshals it.
type Outcome struct {
	Record     *record.Decision
	Draws      *uncertainty.Draws
	Point      model.Params       // the full-data fit
	Validation *validation.Result // the evidence and each family's figures
	Allocation *optimize.Result   // nil when a person's proposal was gated
	Current    []float64          // weekly spend per channel of the status quo
	Proposed   []float64
	Gate       *gate.Decision
	// Judged are the draws the gate and the forecast judged with (the odd
	// positions of the successful replicates); Allocated those the
	// allocator optimised over (the even positions).
	Judged, Allocated []model.Params
	Curves            *model.Curves // of Judge
	Economics         optimize.Economics
	Gains             []float64 // of the approved plan, per judging draw
	// Design is the model design the decision used: Input.Design, or its
	// drifting or seasonal version when the effectiveness choice switched
	// to it.
	Design *model.Design
	// Effect is the effectiveness evidence the choice rests on (the chosen
	// kind's, else the drifting kind's; nil when not run) and EffectChoice
	// its account for the record.
	Effect       *validation.EffectResult
	EffectChoice *record.EffectChoice
}

// Stage names where a decision failed, for reports that count failures.
type Stage string

const (
	StageInput      Stage = "input"
	StageFit        Stage = "fit"
	StageBootstrap  Stage = "bootstrap"
	StageValidation Stage = "validation"
	StageAllocation Stage = "allocation"
	StageGate       Stage = "gate"
)

// Error is a failure of one stage of the decision.
type Error struct {
	Stage Stage
	Err   error
}

func (e *Error) Error() string { return string(e.Stage) + ": " + e.Err.Error() }
func (e *Error) Unwrap() error { return e.Err }

// StageOf returns the stage of a decision error; "" for other errors.
func StageOf(err error) Stage {
	var e *Error
	if errors.As(err, &e) {
		return e.Stage
	}
	return ""
}

func fail(st Stage, err error) error { return &Error{Stage: st, Err: err} }

// Split returns the draws the allocator optimises over (even positions)
// and those the gate judges (odd positions). With fewer than 4 draws there
// is nothing to split and both get all of them.
func Split(draws []model.Params) (allocate, judge []model.Params) {
	if len(draws) < 4 {
		return draws, draws
	}
	for i, p := range draws {
		if i%2 == 0 {
			allocate = append(allocate, p)
		} else {
			judge = append(judge, p)
		}
	}
	return allocate, judge
}

// Make runs the whole decision: Prepare, then Judge under in.Policy.
func Make(ctx context.Context, in Input, s Settings) (*Outcome, error) {
	if in.Policy == nil {
		return nil, fail(StageInput, errors.New("decision: needs a policy"))
	}
	out, err := Prepare(ctx, in, s)
	if err != nil {
		return nil, err
	}
	return out.Judge(in.Policy, in.Waivers)
}

// Prepare runs everything a decision needs before a policy judges it:
// draws, point fit, evidence and the proposal. in.Policy and in.Waivers
// are not used; Judge takes them, so several policies can judge one
// preparation (as the rehearsal does) exactly as Make would.
func Prepare(ctx context.Context, in Input, s Settings) (*Prepared, error) {
	if in.Panel == nil || in.Design == nil || in.Plan == nil {
		return nil, fail(StageInput, errors.New("decision: needs a panel, its design and a plan"))
	}
	s = s.withDefaults()
	d, plan := in.Design, in.Plan
	y := in.Panel.KPI
	names := d.Spec.ChannelNames()
	// The plan's constraints first: they are cheap to check and a plan that
	// cannot hold should fail before any refit.
	rp, err := plan.Resolve(names, d.CurrentSpend())
	if err != nil {
		return nil, fail(StageAllocation, err)
	}

	// Effectiveness: constant, or drifting or seasonal where the evidence
	// says so.
	var choice *record.EffectChoice
	var effect *validation.EffectResult
	var effectChecks []validation.Check
	if s.EffectChoice || d.Spec.AnyDrifting() {
		if s.Progress != nil {
			s.Progress("effectiveness", 0, 1)
		}
		if d, choice, effect, effectChecks, err = chooseEffect(d, y, s, in.Draws != nil); err != nil {
			return nil, fail(StageValidation, fmt.Errorf("effectiveness evidence: %w", err))
		}
		in.Design = d
	}

	// Draws: given, or a bootstrap here (which makes the point fit too).
	dr := in.Draws
	if dr == nil {
		b := &uncertainty.Bootstrap{Design: d, Y: y, Method: uncertainty.MovingBlock, Draws: s.BootstrapDraws,
			Seed: s.Seed, Workers: s.Workers}
		if s.Progress != nil {
			b.Progress = func(done, total int) { s.Progress("bootstrap", done, total) }
		}
		if dr, err = b.Run(ctx); err != nil {
			return nil, fail(StageBootstrap, err)
		}
	}
	all := dr.Params()
	if len(all) == 0 {
		return nil, fail(StageBootstrap, fmt.Errorf("all %d bootstrap refits failed", len(dr.Replicates)))
	}
	full := dr.Header.FullFit
	point := full.Params
	fit := &model.FitResult{Params: point, Fitted: d.Predict(point)}
	fit.Residuals = make([]float64, d.N)
	for t := range y {
		fit.Residuals[t] = y[t] - fit.Fitted[t]
	}
	alloc, judge := Split(all)

	// Evidence.
	prob := validation.Problem{Panel: in.Panel, Design: d, Fit: fit, Lifts: in.Lifts, Forecasts: in.Forecasts,
		Draws: &validation.Draws{Params: all, Failed: dr.Failed()}}
	vs := validation.Settings{Seed: s.Seed, Workers: s.Workers, Replicates: s.Replicates, ValuePerKPI: plan.ValuePerKPI}
	if s.Progress != nil {
		vs.Progress = func(stage string, done, total int) { s.Progress("validation", done, total) }
	}
	th := validation.DefaultThresholds()
	th.BreakEven = plan.BreakEvenMROI() // the plan's economics break even here (KPI value per currency)
	val, err := validation.Run(prob, th, vs)
	if err != nil {
		return nil, fail(StageValidation, err)
	}
	// A channel the effectiveness evidence names as changed but the
	// decision keeps constant is for the policy to act on
	// (effect/modelled, family effectiveness).
	val.Evidence.Checks = append(val.Evidence.Checks, effectChecks...)

	// Proposal: the allocator's on its half of the draws, or a person's.
	h := plan.HorizonWeeks
	econ := optimize.Economics{Horizon: h, Margin: plan.Margin, ValuePerKPI: plan.ValuePerKPI}
	current := make([]float64, len(rp.Constraints.Channels))
	for k, l := range rp.Constraints.Channels {
		current[k] = l.Current
	}
	out := &Prepared{in: in, set: s, sigma: model.FitStats(y, fit.Residuals, d.Spec.NumParams()).Sigma,
		Outcome: Outcome{Draws: dr, Point: point, Validation: val, Current: current, Judged: judge, Allocated: alloc, Economics: econ,
			Design: d, Effect: effect, EffectChoice: choice}}
	out.Curves = d.NewCurves(judge, h)
	if in.Proposal != nil {
		if len(in.Proposal) != len(names) {
			return nil, fail(StageInput, fmt.Errorf("decision: the proposal has %d channels, the model %d", len(in.Proposal), len(names)))
		}
		out.Proposed = slices.Clone(in.Proposal)
		var g float64
		for _, v := range econ.Gains(nil, out.Curves, out.Proposed, current) {
			g += v
		}
		out.proposal = record.Proposal{Source: in.ProposalSource, Objective: "written by a person", ExpectedGain: g / float64(len(judge))}
	} else {
		rp.Response = d.NewCurves(alloc, h)
		rp.Point = d.NewCurves([]model.Params{point}, h)
		res, err := optimize.Solve(*rp, &optimize.Settings{Seed: s.Seed, Workers: s.Workers})
		if err != nil {
			return nil, fail(StageAllocation, err)
		}
		out.Allocation, out.Proposed = res, res.Proposed
		out.proposal = record.Proposal{Source: "allocator", Objective: res.Objective.String(), ExpectedGain: res.ExpectedGain,
			Optimality: res.KKT.Detail}
	}
	return out, nil
}

// Prepared is a decision before a policy judged it.
type Prepared struct {
	Outcome  // the fields Judge fills are empty
	in       Input
	set      Settings
	sigma    float64 // the point fit's residual SD
	proposal record.Proposal
}

// Judge gates the prepared proposal under pol with the waivers and returns
// the decision. p is not changed, so several policies can judge it.
func (p *Prepared) Judge(pol *policies.Policy, waivers []gate.Waiver) (*Outcome, error) {
	if pol == nil {
		return nil, fail(StageInput, errors.New("decision: needs a policy"))
	}
	in, s := p.in, p.set
	d := in.Design
	names := d.Spec.ChannelNames()
	h, econ, current := in.Plan.HorizonWeeks, p.Economics, p.Current
	out := p.Outcome
	dr, val, judge, alloc := p.Draws, p.Validation, p.Judged, p.Allocated
	all := len(dr.Params())

	// The gate, on the judging half.
	low, high := d.Support()
	support := make([]gate.SupportRange, len(low))
	for k := range low {
		support[k] = gate.SupportRange{Low: low[k], High: high[k]}
	}
	gd, err := gate.Run(gate.Review{Channels: names, Current: current, Proposed: out.Proposed,
		Response: out.Curves, Economics: econ, Support: support, Evidence: val.Evidence, Waivers: waivers, Policy: pol},
		gate.Settings{Workers: s.Workers})
	if err != nil {
		return nil, fail(StageGate, err)
	}
	gd.Draws = gate.DrawUse{Allocated: len(alloc), Judged: len(judge),
		Rule: "successful replicates split by position: even to the allocator, odd to the gate and the forecast"}
	if all < 4 {
		gd.Draws.Rule = "fewer than 4 successful replicates: the allocator and the gate share them (optimiser's curse not avoided)"
	}
	out.Gate = gd
	out.Gains = econ.Gains(nil, out.Curves, gd.ApprovedPlan, current)

	// The record's content.
	rec := &record.Decision{Format: record.DecisionFormat, Tool: "sluice", Seed: s.Seed,
		KPI: in.Panel.KPIName, AsOf: in.Panel.Weeks[in.Panel.NumWeeks()-1].Format(time.DateOnly),
		Channels: names, Horizon: h, Support: support, PolicySHA256: record.SHA256Hex(pol.Raw),
		Draws: record.DrawsInfo{Count: len(dr.Replicates), Failed: dr.Failed(), Method: string(dr.Header.Method),
			BlockLength: dr.Header.BlockLength},
		Proposal: p.proposal, Effectiveness: p.EffectChoice, Decision: *gd, Caution: record.Caution}
	// The counts as the policy graded the checks (its false-alarm rates).
	rec.Evidence = map[string]int{"pass": 0, "warn": 0, "fail": 0}
	for _, c := range gd.Checks {
		rec.Evidence[string(c.Status)]++
	}
	fc, total := forecastBand(in, s.Seed, p.Point, judge, gd.ApprovedPlan, h, p.sigma)
	rec.Forecast, rec.ForecastTotal = *fc, total
	out.Record = rec
	return &out, nil
}

// forecastBand forecasts the KPI of each week of the horizon under the
// approved plan: each judging draw's forecast plus noise with the fit's
// residual SD (one seeded stream per draw), summarized by type-8 quantiles.
func forecastBand(in Input, seed uint64, point model.Params, draws []model.Params, plan []float64, h int, sigma float64) (*validation.Forecast, [3]float64) {
	d := in.Design
	weeks := make([][]float64, h)
	totals := make([]float64, len(draws))
	for i, p := range draws {
		f := d.Forecast(p, plan, nil, h)
		rng := uncertainty.Stream(seed^0xf0cac57, i)
		for t, v := range f {
			v += sigma * rng.NormFloat64()
			weeks[t] = append(weeks[t], v)
			totals[i] += v
		}
	}
	var band validation.Band
	for _, w := range weeks {
		q := sample.Quantiles(w, 0.05, 0.5, 0.95)
		band.P05, band.P50, band.P95 = append(band.P05, q[0]), append(band.P50, q[1]), append(band.P95, q[2])
	}
	t := sample.Quantiles(totals, 0.05, 0.5, 0.95)
	planMap := map[string]float64{}
	for k, name := range d.Spec.ChannelNames() {
		planMap[name] = plan[k]
	}
	fc := validation.NewForecast(d, in.Panel.Weeks[0], point, planMap, band, in.MadeWith)
	return fc, [3]float64{t[0], t[1], t[2]}
}
