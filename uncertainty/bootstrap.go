package uncertainty

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"sync"

	"sluice/internal/varpro"
	"sluice/model"
)

// DefaultDraws is the number of replicates when Bootstrap.Draws is zero.
const DefaultDraws = 1000

// DefaultRefitStarts is the number of starts of a replicate's refit: the
// warm start and one seeded random probe (common practice, no source: a
// replicate can leave the full fit's basin when another is clearly better,
// at about twice the cost of a warm refit; each replicate's probe is a
// different point of the box, so over the run the box is searched widely).
const DefaultRefitStarts = 2

// ProbeEvaluations is the evaluation budget of a refit's starts other than
// the warm one (model.FitSettings.ProbeEvaluations): about what a warm
// refit takes (15–30 evaluations under the priors), enough for a start in a
// clearly better basin to overtake it, a tenth of a cold start's cost
// otherwise (common practice, no source). A probe that wins without
// converging is continued (attempt 2).
const ProbeEvaluations = 25

// Bootstrap is a residual bootstrap of the response model: the problem (a
// design and its KPI) and how to resample and refit it. Every field but
// Design and Y documents what its zero value means.
//
// Run first fits the full data (multi-start, maximum a posteriori with the
// spec's priors, calibrated with the design's lift tests), then builds
// replicate i as
//
//	y*_i = ŷ + c·e*_i,   e*_i = Resampler{Method, BlockLength}.Residuals(e, Stream(Seed, i))
//
// with ŷ and e the full fit's fitted values and residuals and c = √(n/(n−p))
// the residual inflation (p the model's parameter count: fitted residuals
// are smaller than the errors by about that factor). Each lift test's
// measured lift is redrawn as measured + se·z (z standard normal from the
// same stream), so the experiments' own uncertainty enters the replicates.
// y*_i is refitted with the full fit's noise SD and its priors, each prior's
// centre redrawn from the prior itself (perturbPriors: randomized maximum
// likelihood, so what only the prior settles varies as the prior says), from
// RefitStarts starts: the full fit (warm) and random starts seeded by the
// stream (probes of ProbeEvaluations each), keeping the best, so a
// replicate can leave the full fit's basin when the data favour another.
// A refit that stops
// without converging (varpro.Converged) is continued from where it
// stopped, with the search's damping reset; if that does not converge
// either, it is retried with the full multi-start: Starts starts, the
// first where the continuation stopped, then the centre of the box and
// random starts seeded by the next 64 bits of the replicate's stream. If
// the retry does not converge, the replicate is recorded as failed with the
// reasons of all three attempts. Replicate i therefore depends only on (the
// problem, Seed, i): not on the worker count, the order of computation or
// the shard.
type Bootstrap struct {
	Design *model.Design
	Y      []float64 // the observed KPI, length Design.N

	// Method is the resampling scheme; the zero value means MovingBlock.
	Method Method
	// BlockLength is the block length (MovingBlock) or mean block length
	// (Stationary); Wild ignores it. Zero means automatic:
	// RegressionBlockLength of the full fit's residuals.
	BlockLength float64
	// RefitStarts is the number of starts of each replicate's refit (the
	// warm start first); zero means DefaultRefitStarts.
	RefitStarts int
	// Draws is the number of replicates of the whole run (all shards);
	// zero means DefaultDraws.
	Draws int
	// Seed determines the full fit's random starts and every replicate.
	Seed uint64
	// Shard selects the replicates this run computes; the zero value means
	// all of them.
	Shard Shard
	// Workers is the number of replicates refitted in parallel (and of the
	// full fit's starts); zero means 1.
	Workers int
	// Starts is the full fit's and the retry's multi-start count; zero
	// means Design.Spec.Starts.
	Starts int
	// RefitEvaluations is the evaluation budget per start of each refit
	// and retry (model.FitSettings.MaxEvaluations); zero means the model's
	// default. The full fit always uses the default.
	RefitEvaluations int
	// Full is the full-data fit, if already made with the same Seed and
	// Starts; nil means Run makes it.
	Full *model.FitResult
	// Progress, if not nil, is called after each replicate with the number
	// done and the number this run computes. Calls come from one goroutine
	// at a time, with done increasing.
	Progress func(done, total int)
}

// Run computes the replicates of the shard. It returns ctx.Err() if the
// context is cancelled before all replicates are done. The header of the
// result has no tool version or input hashes: the caller, who knows the
// files, sets Header.ToolVersion and Header.Inputs before writing.
func (b *Bootstrap) Run(ctx context.Context) (*Draws, error) {
	d := b.Design
	if d == nil {
		panic("uncertainty: Bootstrap without a design")
	}
	if len(b.Y) != d.N {
		panic("uncertainty: Bootstrap: KPI length differs from the design")
	}
	method, err := ParseMethod(string(b.Method))
	if err != nil {
		return nil, err
	}
	draws := b.Draws
	if draws == 0 {
		draws = DefaultDraws
	}
	if draws < 0 || draws > MaxDraws {
		return nil, fmt.Errorf("uncertainty: draws %d must be between 1 and %d", draws, MaxDraws)
	}
	if b.Shard.N != 0 && (b.Shard.K < 1 || b.Shard.K > b.Shard.N) {
		return nil, fmt.Errorf("uncertainty: shard %d/%d: K must be between 1 and N", b.Shard.K, b.Shard.N)
	}
	if math.IsNaN(b.BlockLength) || math.IsInf(b.BlockLength, 0) || b.BlockLength < 0 {
		return nil, fmt.Errorf("uncertainty: block length %g must be a positive number", b.BlockLength)
	}
	starts := b.Starts
	if starts == 0 {
		starts = d.Spec.Starts
	}
	workers := max(b.Workers, 1)
	full := b.Full
	if full == nil {
		full, err = d.Fit(b.Y, model.FitSettings{Seed: b.Seed, Starts: starts, Workers: workers})
		if err != nil {
			return nil, fmt.Errorf("uncertainty: full-data fit: %w", err)
		}
	}
	if !finiteParams(full.Params) {
		return nil, errors.New("uncertainty: full-data fit has non-finite parameters")
	}
	bl, auto := b.BlockLength, false
	var rule *RegressionBlock
	switch {
	case method == Wild:
		bl = 0
	case bl == 0:
		auto = true
		rb := RegressionBlockLength(full.Residuals)
		rule, bl = &rb, rb.Length
	}
	refitStarts := b.RefitStarts
	if refitStarts == 0 {
		refitStarts = DefaultRefitStarts
	}
	if refitStarts < 1 || refitStarts > 200 {
		return nil, fmt.Errorf("uncertainty: refit starts %d must be between 1 and 200", refitStarts)
	}
	p := d.Spec.NumParams()
	if d.N-p < 1 {
		return nil, fmt.Errorf("uncertainty: %d weeks leave no degrees of freedom for %d parameters", d.N, p)
	}
	inflation := math.Sqrt(float64(d.N) / float64(d.N-p))
	out := &Draws{Header: Header{
		Format: FormatVersion, Seed: b.Seed, Method: method, BlockLength: bl, BlockLengthAuto: auto,
		BlockRule: rule, Inflation: inflation, RefitStarts: refitStarts, PriorDraws: full.Priors != nil,
		Draws: draws, Shard: b.Shard.String(), Model: NewModelInfo(d, starts),
		FullFit: FullFit{Params: full.Params.Clone(), SSE: full.SSE, Status: full.Status.String(),
			Priors: full.Priors, NoiseSD: full.NoiseSD, Penalty: full.Penalty, LiftTests: len(d.Lifts)},
	}}
	mine := make([]int, 0, shardSize(b.Shard, draws))
	for i := nextInShard(b.Shard, 0); i < draws; i = nextInShard(b.Shard, i+1) {
		mine = append(mine, i)
	}
	out.Replicates = make([]Replicate, len(mine))
	rf := refitter{d: d, full: full, res: Resampler{Method: method, BlockLength: bl}, seed: b.Seed,
		starts: starts, evals: b.RefitEvaluations, refitStarts: refitStarts, inflation: inflation}

	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	jobs := make(chan int)
	done := make(chan int)
	var wg sync.WaitGroup
	for range min(workers, max(len(mine), 1)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			ystar := make([]float64, d.N)
			eb := make([]float64, d.N)
			for pos := range jobs {
				out.Replicates[pos] = rf.replicate(mine[pos], ystar, eb)
				select {
				case done <- pos:
				case <-ctx.Done():
					return
				}
			}
		}()
	}
	go func() {
		defer close(jobs)
		for pos := range mine {
			select {
			case jobs <- pos:
			case <-ctx.Done():
				return
			}
		}
	}()
	go func() { wg.Wait(); close(done) }()
	n := 0
	for range done {
		n++
		if b.Progress != nil {
			b.Progress(n, len(mine))
		}
	}
	if n < len(mine) {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		panic("uncertainty: replicates lost")
	}
	return out, nil
}

// refitter builds and refits one replicate.
type refitter struct {
	d           *model.Design
	full        *model.FitResult
	res         Resampler
	seed        uint64
	starts      int
	evals       int
	refitStarts int
	inflation   float64
}

// kpi writes replicate i's KPI, ŷ + c·e*, into ystar (eb is scratch) and
// returns the replicate's stream, advanced past the residuals' draws.
func (r *refitter) kpi(i int, ystar, eb []float64) *rand.Rand {
	rng := Stream(r.seed, i)
	r.res.Residuals(eb, r.full.Residuals, rng)
	for t, f := range r.full.Fitted {
		ystar[t] = f + r.inflation*eb[t]
	}
	return rng
}

func (r *refitter) replicate(i int, ystar, eb []float64) Replicate {
	rng := r.kpi(i, ystar, eb)
	retrySeed := rng.Uint64()
	startSeed := rng.Uint64()
	d := r.d
	if len(d.Lifts) > 0 {
		lifts := append([]model.Lift(nil), d.Lifts...)
		for j := range lifts {
			lifts[j].Incremental += lifts[j].StdError * rng.NormFloat64()
		}
		var err error
		if d, err = d.WithLifts(lifts); err != nil {
			return Replicate{Index: i, Failed: true, Reason: err.Error()}
		}
	}
	priors := clampPriors(perturbPriors(r.full.Priors, rng), d.Spec)
	warm := &r.full.Params
	var why []string
	for attempt := 1; attempt <= 3; attempt++ {
		set := model.FitSettings{Warm: warm, MaxEvaluations: r.evals, Priors: priors,
			NoiseSD: r.full.NoiseSD, NoPriors: r.full.Priors == nil}
		switch attempt {
		case 1:
			set.Seed, set.Starts, set.ProbeEvaluations = startSeed, r.refitStarts, ProbeEvaluations
			if r.evals > 0 && r.evals < ProbeEvaluations {
				set.ProbeEvaluations = r.evals // a probe never gets more than a start
			}
		case 3:
			set.Seed, set.Starts = retrySeed, r.starts
		}
		fr, err := d.Fit(ystar, set)
		switch {
		case err != nil || !finiteParams(fr.Params):
			if err != nil {
				why = append(why, err.Error())
			} else {
				why = append(why, "non-finite parameters")
			}
			if attempt == 1 {
				// Nothing to continue from: go on to the multi-start.
				why = append(why, "skipped")
				attempt++
			}
			continue
		case fr.Status == varpro.Converged:
			p := fr.Params.Clone()
			return Replicate{Index: i, Params: &p, SSE: fr.SSE, Attempts: attempt}
		}
		why = append(why, fmt.Sprintf("%s at sse %.8g", fr.Status, fr.SSE))
		// The next attempt starts where this one stopped: starting from
		// the same point again would repeat it exactly.
		warm = &fr.Params
	}
	return Replicate{Index: i, Failed: true, Reason: fmt.Sprintf("warm refit: %s; continued: %s; %d-start retry: %s",
		why[0], why[1], r.starts, why[2])}
}

// perturbPriors returns the priors with every centre redrawn from the
// prior itself: mean + sd·z (log-normal: median·e^(log_sd·z)), z standard
// normal from rng, in a fixed order (per channel: decay, peak, half
// saturation, shape, ROI). Refitting resampled data under redrawn prior
// centres is randomized maximum likelihood ("randomize, then optimize";
// exact posterior draws for a linear-Gaussian model, approximate here):
// a parameter the data cannot settle then varies over the replicates as
// widely as its prior says, instead of sitting at the prior's centre in
// every replicate, which would make the bands look certain where only the
// prior speaks. nil stays nil.
func perturbPriors(p model.Priors, rng *rand.Rand) model.Priors {
	if p == nil {
		return nil
	}
	out := make(model.Priors, len(p))
	for k, c := range p {
		c.Decay.Mean += c.Decay.SD * rng.NormFloat64()
		if c.Peak != nil {
			pk := *c.Peak
			pk.Mean += pk.SD * rng.NormFloat64()
			c.Peak = &pk
		}
		c.HalfSaturation.Median *= math.Exp(c.HalfSaturation.LogSD * rng.NormFloat64())
		if c.Shape != nil {
			sh := *c.Shape
			sh.Mean += sh.SD * rng.NormFloat64()
			c.Shape = &sh
		}
		c.ROI.Mean += c.ROI.SD * rng.NormFloat64()
		out[k] = c
	}
	return out
}

// clampPriors moves redrawn centres into the parameters' boxes (and an
// ROI centre to ≥ 0): the box is the prior's support, so a centre outside
// it only pins the parameter on its bound.
func clampPriors(p model.Priors, spec model.Spec) model.Priors {
	clamp := func(v float64, r model.Range) float64 { return math.Min(r[1], math.Max(r[0], v)) }
	for k := range p {
		c, cs := &p[k], spec.Channels[k]
		c.Decay.Mean = clamp(c.Decay.Mean, cs.Decay)
		if c.Peak != nil {
			c.Peak.Mean = clamp(c.Peak.Mean, cs.Peak)
		}
		c.HalfSaturation.Median = clamp(c.HalfSaturation.Median, cs.HalfSaturation)
		if c.Shape != nil {
			c.Shape.Mean = clamp(c.Shape.Mean, cs.Shape)
		}
		c.ROI.Mean = math.Max(0, c.ROI.Mean)
	}
	return p
}

func finiteParams(p model.Params) bool {
	ok := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	for _, c := range p.Channels {
		if !ok(c.Decay) || !ok(c.Peak) || !ok(c.HalfSat) || !ok(c.Shape) || !ok(c.Beta) {
			return false
		}
	}
	for _, v := range p.Fixed {
		if !ok(v) {
			return false
		}
	}
	return true
}
