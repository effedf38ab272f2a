// Package rehearsal asks how often a policy would have lost money in worlds
// where the model is wrong. Each world starts from the fit to the user's
// data (parameters from a bootstrap draw, the real spend history, residuals
// resampled from the real fit); a share of worlds breaks one of the model's
// assumptions. On every world the whole decision process runs (fit,
// bootstrap, validation, allocation, gate), and each plan is scored by its
// TRUE gain over the horizon, which only a rehearsal can know.
package rehearsal

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"

	"sluice/decision"
	"sluice/gate"
	"sluice/internal/sample"
	"sluice/model"
	"sluice/optimize"
	"sluice/policies"
	"sluice/uncertainty"
	"sluice/validation"
)

// Problem is what to rehearse: the user's data and model, the plan and the
// policies to compare.
type Problem struct {
	Panel    *model.Panel
	Design   *model.Design // built from Panel with the usual spec
	Plan     *optimize.Plan
	Policies []*policies.Policy
	// Lifts are the user's lift tests; each world gets its own, simulated
	// from its truth with the same windows and standard errors.
	Lifts []validation.LiftTest
}

// Settings say how many worlds and how large each world's decision is. The
// zero value is usable: every zero field means the default it documents.
type Settings struct {
	Seed   uint64 // world i is fully determined by (Seed, i)
	Worlds int    // 0 means 200
	// Misspecified is the share of worlds that break an assumption; zero
	// means none (the command's default is 0.5).
	Misspecified float64
	// Kinds are the misspecified kinds drawn from, uniformly; nil means AllKinds.
	Kinds []Kind
	// BaseDraws is the size of the bootstrap of the user's data that the
	// worlds' parameters come from; 0 means 100.
	BaseDraws int
	// WorldDraws is the bootstrap size of each world's decision; 0 means 60.
	WorldDraws int
	// Replicates is the recovery check's panel count in each world's
	// validation; 0 means 8.
	Replicates int
	Workers    int // parallel refits; 0 means 1
	// Shard, if set, runs only its worlds (i % N == K-1); Merge combines
	// the shards into exactly the result of one run.
	Shard uncertainty.Shard
	// EffectChoice runs, in every world, propose's effectiveness choice
	// (decision.Settings.EffectChoice), so the rehearsal rehearses what
	// propose decides by default. A world where the choice switched to a
	// varying specification is decided once more without it
	// (Outcome.Without), for Result.Effect.
	EffectChoice bool
	// Progress, if not nil, is told after each world.
	Progress func(done, total int)

	truthFromFit bool // tests: every world's truth is the user's point fit
}

// Sizes are the sizes a rehearsal used, for its output.
type Sizes struct {
	BaseDraws  int `json:"base_draws"`
	WorldDraws int `json:"world_draws"`
	Replicates int `json:"validation_replicates"`
	Horizon    int `json:"horizon_weeks"`
	// EffectChoice says whether each world's decision ran the
	// effectiveness choice (propose's default).
	EffectChoice bool `json:"effect_choice"`
	// Shrunk names each size smaller in a world than in propose's own
	// decision (package decision's defaults), so a reader knows the
	// rehearsal's decisions are noisier than the real one.
	Shrunk []string `json:"shrunk,omitempty"`
}

// shrunk says which sizes are below propose's.
func (z Sizes) shrunk() []string {
	var out []string
	if z.WorldDraws < decision.DefaultBootstrapDraws {
		out = append(out, fmt.Sprintf("bootstrap draws %d per world (propose: %d)", z.WorldDraws, decision.DefaultBootstrapDraws))
	}
	if z.Replicates < decision.DefaultReplicates {
		out = append(out, fmt.Sprintf("recovery panels %d per world (propose: %d)", z.Replicates, decision.DefaultReplicates))
	}
	return out
}

func (s Settings) withDefaults() Settings {
	def := func(v *int, d int) {
		if *v <= 0 {
			*v = d
		}
	}
	def(&s.Worlds, 200)
	def(&s.BaseDraws, 100)
	def(&s.WorldDraws, 60)
	def(&s.Replicates, 8)
	def(&s.Workers, 1)
	if s.Kinds == nil {
		s.Kinds = AllKinds
	}
	return s
}

// Score is one plan's outcome in one world.
type Score struct {
	Plan     []float64 `json:"plan"`      // weekly spend per channel
	TrueGain float64   `json:"true_gain"` // over the horizon, against the status quo, under the truth
	Lost     bool      `json:"lost"`      // TrueGain < 0
	// OracleShare is TrueGain over the oracle's true gain (0 when the
	// oracle gains nothing).
	OracleShare float64      `json:"oracle_share"`
	Verdict     gate.Verdict `json:"verdict,omitempty"`
	// Acted names the checks (name/scope) whose policy action the gate
	// applied: refuse, hold or cap (a policy's plans only).
	Acted []string `json:"acted,omitempty"`
}

// Outcome is one world's result.
type Outcome struct {
	Index   int    `json:"index"`
	Kind    Kind   `json:"kind"`
	Channel string `json:"channel,omitempty"`
	Draw    int    `json:"draw"`
	Seed    uint64 `json:"seed"` // of the world's decision (fit, bootstrap, validation, allocation)
	// Drift is a drift world's β in the last week of history over its β
	// at the start (what was drawn: ×1.5–2 or ×0.5–0.7); DriftRamp says
	// whether it ramped over the whole history or its last third.
	Drift     float64 `json:"drift,omitempty"`
	DriftRamp string  `json:"drift_ramp,omitempty"`
	// Drifting names the channels the effectiveness choice let vary in
	// this world's decision (Settings.EffectChoice); empty: constant.
	// EffectModel is the varying specification it chose (drifting or
	// seasonal); "" when constant.
	Drifting     []string `json:"drifting,omitempty"`
	EffectModel  string   `json:"effect_model,omitempty"`
	Checks       int      `json:"checks"`
	FailedChecks []string `json:"failed_checks"` // name/scope of each failed check
	// Stated is, per tested check name, the false-alarm rate it was
	// graded at (the sum over its channels of each check's rate, default
	// rates); checks without a p-value are absent.
	Stated map[string]float64 `json:"stated_rates,omitempty"`
	// Untested are the failed checks of a testing kind that carry no
	// p-value (name/scope): the channel's effect is fitted to zero (they
	// fail so as not to pass by comparing 0 with 0), or the null could not
	// be measured and the raw limit graded them. They are not a test's
	// false alarms and are counted apart.
	Untested []string `json:"failed_untested,omitempty"`
	Oracle   Score    `json:"oracle"`   // the best plan under the truth, same constraints
	Raw      Score    `json:"raw"`      // the allocator's proposal
	Policies []Score  `json:"policies"` // each policy's approved plan, in Problem order
	// Without is the same world decided without the effectiveness choice
	// (the constant model; same seed, sizes and policies), scored under
	// the same truth. It is set only when the choice used a varying
	// specification: otherwise the two decisions are one and Raw and
	// Policies are both.
	Without *Alternative `json:"without_effect,omitempty"`
	Err     string       `json:"error,omitempty"`
	// Stage is where a world that could not be decided failed (input, fit,
	// bootstrap, validation, allocation, oracle, gate); "" when decided.
	Stage string `json:"failed_stage,omitempty"`
}

// Alternative is one world's other decision: its raw proposal and each
// policy's approved plan, scored under the world's truth against the same
// oracle.
type Alternative struct {
	Raw      Score   `json:"raw"`
	Policies []Score `json:"policies"`
}

// Failure counts the worlds that failed at one stage, with their distinct
// reasons (the first few, each with its worlds).
type Failure struct {
	Stage   string   `json:"stage"`
	Worlds  int      `json:"worlds"`
	Reasons []string `json:"reasons"`
}

// maxReasons caps the distinct reasons kept per stage.
const maxReasons = 5

// LoudShare is the share of failed worlds above which a rehearsal's
// figures are said to be in doubt: they cover only the worlds that were
// decided, which may not be like the others (common practice, no source).
const LoudShare = 0.10

// Summary sums up one way of deciding over the worlds.
type Summary struct {
	Name     string  `json:"name"`
	Worlds   int     `json:"worlds"`
	PLoss    float64 `json:"p_loss"`    // share of worlds where the true gain < 0
	MeanGain float64 `json:"mean_gain"` // mean true gain
	P05Gain  float64 `json:"p05_gain"`  // 5th percentile of the true gain (sample.Quantiles)
	// OracleShare is Σ true gain / Σ oracle gain: the share of what was
	// there to gain that was captured (a ratio of sums, so worlds with a
	// tiny oracle gain do not dominate).
	OracleShare float64           `json:"oracle_share"`
	Refused     float64           `json:"refused"` // share of worlds refused (0 for raw)
	ByWorldKind map[Kind]*Summary `json:"by_world_kind,omitempty"`
	gains       []float64
	oracle      []float64
	refusals    int
}

// Result is a rehearsal.
type Result struct {
	Seed     uint64    `json:"seed"`
	Worlds   []Outcome `json:"-"`
	Policies []Summary `json:"policies"`
	Raw      Summary   `json:"raw"`
	Sizes    Sizes     `json:"sizes"`
	// FailedShare is the mean share of failed checks per world kind.
	FailedShare map[Kind]float64 `json:"failed_check_share"`
	Errors      int              `json:"errors"` // worlds whose decision could not run, left out
	Decided     int              `json:"decided"`
	// Failures are the worlds that could not be decided, by stage; every
	// one is here, none is dropped silently.
	Failures []Failure `json:"failures"`
	// Checks are each check's realised false-alarm rate (well-specified
	// worlds) and power (per misspecified kind), graded at the default
	// false-alarm rates.
	Checks []CheckRate `json:"checks"`
	// Drifting counts, per world kind, the decided worlds whose decision
	// let some channel drift by the effectiveness choice.
	Drifting map[Kind]int `json:"effect_drifting,omitempty"`
	// Effect compares, per kind of world, the decisions with the
	// effectiveness choice and without it (rehearsals run with the choice
	// only): drift and season worlds, and every kind where the choice
	// switched to a varying specification.
	Effect []EffectComparison `json:"with_without_effect,omitempty"`
	// DriftDrawn says what the drift worlds drew (decided or not).
	DriftDrawn *DriftDrawn `json:"drift_drawn,omitempty"`
}

// EffectComparison is one kind of world decided with and without the
// effectiveness choice. In a world where the choice kept the constant
// model the two decisions are the same one and count on both sides.
type EffectComparison struct {
	Kind     Kind `json:"kind"`
	Worlds   int  `json:"worlds"`   // decided worlds of the kind
	Switched int  `json:"switched"` // of them, decided with a varying effectiveness
	// OnAffected counts the switched worlds whose varying channels include
	// the world's affected channel; the others varied only channels the
	// world did not change (false alarms of the evidence).
	OnAffected int `json:"switched_on_affected"`
	// Deciders are the raw proposal, then each policy in order.
	Deciders []EffectPair `json:"deciders"`
}

// EffectPair is one way of deciding summed up over a kind's worlds with
// the effectiveness choice (as propose runs) and without it (constant).
type EffectPair struct {
	Name    string  `json:"name"`
	With    Summary `json:"with_effect"`
	Without Summary `json:"without_effect"`
}

// DriftDrawn sums up the drift worlds' drawn sizes: how many rose and fell,
// how many ramped over the last third only, and the range of the
// end-over-start multipliers.
type DriftDrawn struct {
	Worlds    int     `json:"worlds"`
	Rising    int     `json:"rising"`
	Falling   int     `json:"falling"`
	LastThird int     `json:"last_third"`
	Min       float64 `json:"min"`
	Max       float64 `json:"max"`
}

// CheckRate is how often one check (over all channels) failed. A check
// that failed because a channel's effect was fitted to zero ("not judged")
// is not counted: it is not a test's alarm.
type CheckRate struct {
	Name string `json:"name"`
	// Stated is the mean rate it was graded at in well-specified worlds:
	// what it should fire at there; 0 for a check without a p-value
	// (precision measures and raw thresholds).
	Stated float64 `json:"stated_rate"`
	// FalseAlarm is the share of well-specified worlds where it failed for
	// some channel; Worlds counts those worlds.
	FalseAlarm float64 `json:"false_alarm_rate"`
	Worlds     int     `json:"well_specified_worlds"`
	// Untested is the share of well-specified worlds where it failed
	// without a p-value (Outcome.Untested): a channel fitted to zero.
	Untested float64 `json:"untested_share"`
	// Power is, per misspecified kind, the share of its worlds where it
	// failed for the affected channel (or globally, for a global check).
	Power map[Kind]float64 `json:"power,omitempty"`
}

// FailedShareOfWorlds is the share of worlds that could not be decided.
func (r *Result) FailedShareOfWorlds() float64 {
	if n := r.Decided + r.Errors; n > 0 {
		return float64(r.Errors) / float64(n)
	}
	return 0
}

// Loud says whether so many worlds failed (more than LoudShare) that the
// figures must be read with that warning.
func (r *Result) Loud() bool { return r.FailedShareOfWorlds() > LoudShare }

// WorldOf builds world i of the rehearsal (p, s) alone, exactly as Run
// builds it: to rerun one world's decision outside the rehearsal.
func WorldOf(ctx context.Context, p Problem, s Settings, i int) (*World, error) {
	s = s.withDefaults()
	b, err := newBase(ctx, p, s)
	if err != nil {
		return nil, err
	}
	return b.world(s.Seed, i, s.Misspecified, s.Kinds), nil
}

func newBase(ctx context.Context, p Problem, s Settings) (*base, error) {
	bs := &uncertainty.Bootstrap{Design: p.Design, Y: p.Panel.KPI, Draws: s.BaseDraws, Seed: s.Seed, Workers: s.Workers}
	d, err := bs.Run(ctx)
	if err != nil {
		return nil, fmt.Errorf("rehearsal: bootstrap of the data: %w", err)
	}
	full := d.Header.FullFit.Params
	resid := make([]float64, p.Design.N)
	for t, v := range p.Design.Predict(full) {
		resid[t] = p.Panel.KPI[t] - v
	}
	b := &base{panel: p.Panel, design: p.Design, draws: d.Params(), resid: resid, block: d.Header.BlockLength, horiz: p.Plan.HorizonWeeks}
	if s.truthFromFit {
		b.draws = []model.Params{full}
	}
	if len(b.draws) == 0 {
		return nil, errors.New("rehearsal: every refit of the data's bootstrap failed")
	}
	return b, nil
}

// Run rehearses p. Worlds run one after another; each uses Workers.
func Run(ctx context.Context, p Problem, s Settings) (*Result, error) {
	if p.Panel == nil || p.Design == nil || p.Plan == nil {
		panic("rehearsal: Run needs a panel, its design and a plan")
	}
	if len(p.Policies) == 0 {
		return nil, errors.New("rehearsal: no policy to rehearse")
	}
	if !(s.Misspecified >= 0 && s.Misspecified <= 1) {
		return nil, fmt.Errorf("rehearsal: misspecified share %v must be in [0, 1]", s.Misspecified)
	}
	s = s.withDefaults()
	h := p.Plan.HorizonWeeks
	b, err := newBase(ctx, p, s)
	if err != nil {
		return nil, err
	}
	res := &Result{Seed: s.Seed, Sizes: Sizes{BaseDraws: s.BaseDraws, WorldDraws: s.WorldDraws, Replicates: s.Replicates, Horizon: h,
		EffectChoice: s.EffectChoice}}
	res.Sizes.Shrunk = res.Sizes.shrunk()
	for i := range s.Worlds {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		if !s.Shard.Has(i) {
			continue
		}
		w := b.world(s.Seed, i, s.Misspecified, s.Kinds)
		if s.truthFromFit {
			w.Kind, w.Channel = WellSpecified, ""
		}
		out, err := decideWorld(ctx, p, s, w)
		if err != nil && ctx.Err() != nil {
			return nil, ctx.Err()
		}
		if err != nil {
			st := string(decision.StageOf(err))
			if st == "" {
				st = "other"
			}
			out = &Outcome{Index: i, Kind: w.Kind, Channel: w.Channel, Draw: w.Draw, Seed: w.Seed, Drift: w.DriftEnd, DriftRamp: w.DriftRamp,
				Err: err.Error(), Stage: st}
		}
		res.Worlds = append(res.Worlds, *out)
		if s.Progress != nil {
			s.Progress(i+1, s.Worlds)
		}
	}
	res.summarize(policyNames(p))
	return res, nil
}

func policyNames(p Problem) []string {
	names := make([]string, len(p.Policies))
	for j, pol := range p.Policies {
		names[j] = pol.Name
	}
	return names
}

// Merge combines the outcomes of shards of one rehearsal (same seed,
// sizes and policies, run with Shard k/n for every k) into the result of
// the unsharded run: every world once, in index order, summaries
// recomputed. worlds is the unsharded run's world count; shards is the N
// all parts were run with (0 when unknown or mixed), used to name a
// missing shard.
func Merge(seed uint64, sizes Sizes, policies []string, worlds, shards int, parts [][]Outcome) (*Result, error) {
	if worlds < 0 {
		return nil, fmt.Errorf("rehearsal: %d worlds", worlds) // a forged shard file (found by FuzzRehearsalJSON)
	}
	res := &Result{Seed: seed, Sizes: sizes, Worlds: make([]Outcome, 0, worlds)}
	seen := make([]bool, worlds)
	for _, part := range parts {
		for _, o := range part {
			if o.Index < 0 || o.Index >= worlds {
				return nil, fmt.Errorf("rehearsal: world %d is outside 0..%d", o.Index, worlds-1)
			}
			if seen[o.Index] {
				return nil, fmt.Errorf("rehearsal: world %d is in two shards", o.Index)
			}
			if o.Err == "" && len(o.Policies) != len(policies) {
				return nil, fmt.Errorf("rehearsal: world %d scores %d policies, not %d", o.Index, len(o.Policies), len(policies))
			}
			if o.Err == "" && o.Without != nil && len(o.Without.Policies) != len(policies) {
				return nil, fmt.Errorf("rehearsal: world %d scores %d policies without the effectiveness choice, not %d", o.Index, len(o.Without.Policies), len(policies))
			}
			seen[o.Index] = true
			res.Worlds = append(res.Worlds, o)
		}
	}
	var missing []int
	for i, ok := range seen {
		if !ok {
			missing = append(missing, i)
		}
	}
	if len(missing) > 0 {
		return nil, fmt.Errorf("rehearsal: world %d is in no shard (%d of %d worlds missing); %s",
			missing[0], len(missing), worlds, uncertainty.NameMissing(missing, shards))
	}
	slices.SortFunc(res.Worlds, func(a, b Outcome) int { return a.Index - b.Index })
	res.summarize(policies)
	return res, nil
}

// StageWithout is the failed stage of a world decided with a varying
// effectiveness whose decision without the choice (Outcome.Without) could
// not run.
const StageWithout = "without_effect"

// decideWorld runs the decision pipeline (package decision, exactly what
// propose runs) on w's panel and scores each plan under w's truth. When
// the effectiveness choice used a varying specification, it decides the
// world once more without the choice and scores that too (Outcome.Without).
func decideWorld(ctx context.Context, p Problem, s Settings, w *World) (*Outcome, error) {
	dw, err := model.NewDesign(w.Panel, p.Design.Spec)
	if err != nil {
		return nil, &decision.Error{Stage: decision.StageInput, Err: err}
	}
	lifts := worldLifts(w, p.Lifts)
	if len(lifts) > 0 {
		// As propose does with --lifts: every fit of the world is calibrated
		// with its lift tests.
		rows := make([]model.Lift, len(lifts))
		for i, l := range lifts {
			rows[i] = model.Lift{Channel: l.ChannelIndex, From: l.From, To: l.To, Incremental: l.Incremental, StdError: l.StdError}
		}
		if dw, err = dw.WithLifts(rows); err != nil {
			return nil, &decision.Error{Stage: decision.StageInput, Err: err}
		}
	}
	in := decision.Input{Panel: w.Panel, Design: dw, Plan: p.Plan, Lifts: lifts}
	set := decision.Settings{Seed: w.Seed, Workers: s.Workers,
		BootstrapDraws: s.WorldDraws, Replicates: s.Replicates, EffectChoice: s.EffectChoice}
	prep, err := decision.Prepare(ctx, in, set)
	if err != nil {
		return nil, err
	}
	val := prep.Validation
	out := &Outcome{Index: w.Index, Kind: w.Kind, Channel: w.Channel, Draw: w.Draw, Seed: w.Seed, Checks: len(val.Evidence.Checks),
		Drift: w.DriftEnd, DriftRamp: w.DriftRamp}
	varying := false
	if ch := prep.EffectChoice; ch != nil && ch.Model != model.EffectConstant {
		out.Drifting, out.EffectModel, varying = ch.Channels, ch.Model, true
	}
	for _, c := range val.Evidence.Checks {
		if c.Status == validation.Fail {
			out.FailedChecks = append(out.FailedChecks, c.Name+"/"+c.Scope)
			if c.PValue == nil && validation.IsTest(c.Name) {
				out.Untested = append(out.Untested, c.Name+"/"+c.Scope)
			}
		}
		if c.PValue != nil && !c.RawThreshold {
			if out.Stated == nil {
				out.Stated = map[string]float64{}
			}
			out.Stated[c.Name] += c.Rate
		}
	}

	names := dw.Spec.ChannelNames()
	h := p.Plan.HorizonWeeks
	econ := prep.Economics
	current := prep.Current
	// The truth is the world's own response (truth.go), not the model's
	// curves of w.Truth.
	truth := w.trueResponse(h)
	prob, err := p.Plan.Resolve(names, dw.CurrentSpend())
	if err != nil {
		return nil, &decision.Error{Stage: decision.StageAllocation, Err: err}
	}
	prob.Response = truth
	oracle, err := optimize.Solve(*prob, &optimize.Settings{Seed: w.Seed, Workers: s.Workers})
	if err != nil {
		return nil, &decision.Error{Stage: "oracle", Err: err}
	}
	og := econ.Gains(nil, truth, oracle.Proposed, current)[0]
	score := func(plan []float64) Score {
		g := econ.Gains(nil, truth, plan, current)[0]
		sc := Score{Plan: slices.Clone(plan), TrueGain: g, Lost: g < 0}
		if og > 0 {
			sc.OracleShare = g / og
		}
		return sc
	}
	out.Oracle = score(oracle.Proposed)
	alt, err := judgeAll(prep, p.Policies, score)
	if err != nil {
		return nil, err
	}
	out.Raw, out.Policies = alt.Raw, alt.Policies
	if !varying {
		// Without the choice the decision would be this one (the choice
		// kept the constant model): its scores serve for both, no rerun.
		return out, nil
	}
	// The choice switched: decide the world again with the constant model,
	// everything else as it was (seed, sizes, lifts, policies), and score
	// it under the same truth and oracle. This costs one more decision
	// (bootstrap, validation, allocation, gates; not the evidence) in each
	// switched world only: 0.48 s on the demo data at the default sizes,
	// against 2.58 s for the switched world in all (BenchmarkDecideDriftWorld).
	set.EffectChoice = false
	prep0, err := decision.Prepare(ctx, in, set)
	if err != nil {
		st := decision.StageOf(err)
		return nil, &decision.Error{Stage: StageWithout, Err: fmt.Errorf("deciding without the effectiveness choice (%s): %w", st, err)}
	}
	if out.Without, err = judgeAll(prep0, p.Policies, score); err != nil {
		return nil, &decision.Error{Stage: StageWithout, Err: fmt.Errorf("deciding without the effectiveness choice: %w", err)}
	}
	return out, nil
}

// judgeAll scores a prepared decision's raw proposal and each policy's
// approved plan.
func judgeAll(prep *decision.Prepared, pols []*policies.Policy, score func([]float64) Score) (*Alternative, error) {
	alt := &Alternative{Raw: score(prep.Proposed)}
	for _, pol := range pols {
		dec, err := prep.Judge(pol, nil)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", pol.Name, err)
		}
		gd := dec.Gate
		sc := score(gd.ApprovedPlan)
		sc.Verdict = gd.Verdict
		for _, cu := range gd.Checks {
			if cu.WaivedBy == "" && (cu.Action == policies.Refuse || cu.Action == policies.Hold || cu.Action == policies.Cap) {
				sc.Acted = append(sc.Acted, cu.Name+"/"+cu.Scope)
			}
		}
		alt.Policies = append(alt.Policies, sc)
	}
	return alt, nil
}

// worldLifts simulates the user's lift tests in world w: the same channels,
// windows and standard errors, the incremental KPI the world's truth gives
// over the window plus normal noise of the test's standard error (one
// stream per world).
func worldLifts(w *World, lifts []validation.LiftTest) []validation.LiftTest {
	if len(lifts) == 0 {
		return nil
	}
	rng := uncertainty.Stream(w.Seed^0x11f7, 0)
	out := make([]validation.LiftTest, len(lifts))
	for i, l := range lifts {
		l.Incremental = w.LiftTruth(l.ChannelIndex, l.From, l.To) + l.StdError*rng.NormFloat64()
		l.Source = "simulated from the world's truth"
		out[i] = l
	}
	return out
}

func (r *Result) summarize(policies []string) {
	r.Raw = Summary{Name: "raw"}
	r.Policies = make([]Summary, len(policies))
	for j, name := range policies {
		r.Policies[j] = Summary{Name: name}
	}
	checks := map[Kind][2]float64{} // Σ failed share, worlds
	r.Drifting = nil
	r.Errors, r.Decided, r.Failures = 0, 0, []Failure{}
	byStage := map[string]int{}
	for _, o := range r.Worlds {
		if o.Err != "" {
			r.Errors++
			st := o.Stage
			if st == "" {
				st = "other"
			}
			j, ok := byStage[st]
			if !ok {
				j = len(r.Failures)
				byStage[st] = j
				r.Failures = append(r.Failures, Failure{Stage: st})
			}
			f := &r.Failures[j]
			f.Worlds++
			if len(f.Reasons) < maxReasons {
				f.Reasons = append(f.Reasons, fmt.Sprintf("world %d (%s): %s", o.Index, o.Kind, o.Err))
			}
			continue
		}
		r.Decided++
		if len(o.Drifting) > 0 {
			if r.Drifting == nil {
				r.Drifting = map[Kind]int{}
			}
			r.Drifting[o.Kind]++
		}
		r.Raw.add(o.Kind, o.Raw, o.Oracle.TrueGain)
		for j := range r.Policies {
			r.Policies[j].add(o.Kind, o.Policies[j], o.Oracle.TrueGain)
		}
		c := checks[o.Kind]
		if o.Checks > 0 {
			c[0] += float64(len(o.FailedChecks)) / float64(o.Checks)
		}
		c[1]++
		checks[o.Kind] = c
	}
	slices.SortFunc(r.Failures, func(a, b Failure) int { return b.Worlds - a.Worlds })
	r.Raw.finish()
	for j := range r.Policies {
		r.Policies[j].finish()
	}
	r.Checks = checkRates(r.Worlds)
	r.Effect = nil
	if r.Sizes.EffectChoice {
		r.Effect = effectComparisons(r.Worlds, policies)
	}
	r.DriftDrawn = driftDrawn(r.Worlds)
	r.FailedShare = map[Kind]float64{}
	for k, c := range checks {
		r.FailedShare[k] = c[0] / c[1]
	}
}

func (s *Summary) add(k Kind, sc Score, oracle float64) {
	s.gains = append(s.gains, sc.TrueGain)
	s.oracle = append(s.oracle, oracle)
	if sc.Verdict == gate.Refuse {
		s.refusals++
	}
	if k == "" {
		return
	}
	if s.ByWorldKind == nil {
		s.ByWorldKind = map[Kind]*Summary{}
	}
	sub := s.ByWorldKind[k]
	if sub == nil {
		sub = &Summary{Name: string(k)}
		s.ByWorldKind[k] = sub
	}
	sub.add("", sc, oracle)
}

func (s *Summary) finish() {
	n := len(s.gains)
	s.Worlds = n
	if n == 0 {
		return
	}
	var lost int
	var sum, osum float64
	for i, g := range s.gains {
		if g < 0 {
			lost++
		}
		sum += g
		osum += s.oracle[i]
	}
	s.PLoss = float64(lost) / float64(n)
	s.MeanGain = sum / float64(n)
	s.P05Gain = sample.Quantiles(s.gains, 0.05)[0]
	if osum > 0 {
		s.OracleShare = sum / osum
	}
	s.Refused = float64(s.refusals) / float64(n)
	for _, sub := range s.ByWorldKind {
		sub.finish()
	}
}

// checkRates measures each check's realised false-alarm rate and power.
func checkRates(worlds []Outcome) []CheckRate {
	type acc struct {
		stated             float64
		well, fired, unjud int
		kindN, kindF       map[Kind]int
	}
	m := map[string]*acc{}
	get := func(name string) *acc {
		a := m[name]
		if a == nil {
			a = &acc{kindN: map[Kind]int{}, kindF: map[Kind]int{}}
			m[name] = a
		}
		return a
	}
	for _, o := range worlds {
		if o.Err != "" {
			continue
		}
		for name := range o.Stated {
			get(name)
		}
		for _, f := range o.FailedChecks {
			get(checkName(f))
		}
	}
	for _, o := range worlds {
		if o.Err != "" {
			continue
		}
		fired := map[string]bool{}     // any channel
		firedHere := map[string]bool{} // the affected channel, or global
		unjudged := map[string]bool{}
		for _, f := range o.FailedChecks {
			name := checkName(f)
			if slices.Contains(o.Untested, f) {
				unjudged[name] = true
				continue
			}
			fired[name] = true
			scope := f[len(name)+1:]
			if scope == o.Channel || scope == validation.Global {
				firedHere[name] = true
			}
		}
		for name, a := range m {
			if o.Kind == WellSpecified {
				a.well++
				a.stated += o.Stated[name]
				if fired[name] {
					a.fired++
				}
				if unjudged[name] {
					a.unjud++
				}
				continue
			}
			a.kindN[o.Kind]++
			if firedHere[name] {
				a.kindF[o.Kind]++
			}
		}
	}
	var out []CheckRate
	for name, a := range m {
		cr := CheckRate{Name: name, Worlds: a.well}
		if a.well > 0 {
			cr.Stated = a.stated / float64(a.well)
			cr.FalseAlarm = float64(a.fired) / float64(a.well)
			cr.Untested = float64(a.unjud) / float64(a.well)
		}
		for k, n := range a.kindN {
			if cr.Power == nil {
				cr.Power = map[Kind]float64{}
			}
			cr.Power[k] = float64(a.kindF[k]) / float64(n)
		}
		out = append(out, cr)
	}
	slices.SortFunc(out, func(a, b CheckRate) int { return strings.Compare(a.Name, b.Name) })
	return out
}

// checkName is the check's name in "name/scope" (names hold a slash too).
func checkName(f string) string {
	if i := strings.LastIndex(f, "/"); i > 0 {
		return f[:i]
	}
	return f
}

// effectComparisons sums up, per kind of world (drift, season and any kind
// where the choice switched, in the kinds' order), each way of deciding
// with and without the effectiveness choice, from the decided worlds.
func effectComparisons(worlds []Outcome, policies []string) []EffectComparison {
	type acc struct {
		worlds, switched, onAffected int
		with, without                []Summary
	}
	m := map[Kind]*acc{}
	for _, o := range worlds {
		if o.Err != "" {
			continue
		}
		a := m[o.Kind]
		if a == nil {
			a = &acc{with: make([]Summary, 1+len(policies)), without: make([]Summary, 1+len(policies))}
			a.with[0].Name, a.without[0].Name = "raw", "raw"
			for j, name := range policies {
				a.with[j+1].Name, a.without[j+1].Name = name, name
			}
			m[o.Kind] = a
		}
		a.worlds++
		other := &Alternative{Raw: o.Raw, Policies: o.Policies}
		if o.Without != nil {
			a.switched++
			if o.Channel != "" && slices.Contains(o.Drifting, o.Channel) {
				a.onAffected++
			}
			other = o.Without
		}
		og := o.Oracle.TrueGain
		a.with[0].add("", o.Raw, og)
		a.without[0].add("", other.Raw, og)
		for j := range policies {
			a.with[j+1].add("", o.Policies[j], og)
			a.without[j+1].add("", other.Policies[j], og)
		}
	}
	var out []EffectComparison
	for _, k := range append([]Kind{WellSpecified}, AllKinds...) {
		a := m[k]
		if a == nil || (k != Drift && k != Season && a.switched == 0) {
			continue
		}
		c := EffectComparison{Kind: k, Worlds: a.worlds, Switched: a.switched, OnAffected: a.onAffected}
		for j := range a.with {
			a.with[j].finish()
			a.without[j].finish()
			c.Deciders = append(c.Deciders, EffectPair{Name: a.with[j].Name, With: a.with[j], Without: a.without[j]})
		}
		out = append(out, c)
	}
	return out
}

// driftDrawn sums up the drift worlds' drawn sizes; nil without any.
func driftDrawn(worlds []Outcome) *DriftDrawn {
	var d *DriftDrawn
	for _, o := range worlds {
		if o.Kind != Drift || o.Drift == 0 {
			continue
		}
		if d == nil {
			d = &DriftDrawn{Min: o.Drift, Max: o.Drift}
		}
		d.Worlds++
		if o.Drift > 1 {
			d.Rising++
		} else {
			d.Falling++
		}
		if o.DriftRamp == RampLate {
			d.LastThird++
		}
		d.Min, d.Max = min(d.Min, o.Drift), max(d.Max, o.Drift)
	}
	return d
}
