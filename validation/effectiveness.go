package validation

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"

	"sluice/internal/sample"
	"sluice/model"
)

// EffectSettings says how the effectiveness check runs. Zero fields mean
// the defaults documented on each.
type EffectSettings struct {
	Seed    uint64
	Workers int
	// Replicates of the residual block bootstrap of the drifting fit; 0
	// means 60.
	Replicates int
	// BlockWeeks is the length of the resampled residual blocks; 0 means 8.
	BlockWeeks int
	// Origins and OriginWeeks lay out the rolling-origin backtest over the
	// last weeks: Origins origins OriginWeeks apart, each tested on the
	// OriginWeeks after it; 0 means 3 and 13.
	Origins, OriginWeeks int
	// Kind is the varying specification tested against the constant one:
	// model.EffectDrifting (the default) or model.EffectSeasonal.
	Kind string
	// Alpha is the family-wise false-alarm share over all channels: a
	// channel is named as changed when |log change| / SD exceeds the
	// normal quantile 1 − Alpha/(2K), K channels (Bonferroni); 0 means 0.10.
	Alpha float64
}

func (s EffectSettings) withDefaults() EffectSettings {
	def := func(v *int, d int) {
		if *v <= 0 {
			*v = d
		}
	}
	def(&s.Workers, 1)
	def(&s.Replicates, 60)
	def(&s.BlockWeeks, 8)
	def(&s.Origins, 3)
	def(&s.OriginWeeks, 13)
	if s.Alpha <= 0 || s.Alpha >= 1 {
		s.Alpha = 0.10
	}
	if s.Kind == "" {
		s.Kind = model.EffectDrifting
	}
	return s
}

// EffectChannel is one channel's effectiveness evidence: the drifting fit's
// effectiveness in the last week over its mean over the history (Change),
// its 90% interval from the bootstrap, its z (log Change over the
// bootstrap SD of log Change) and whether the change is named.
type EffectChannel struct {
	Kind     string    `json:"kind"` // drifting or seasonal
	Horizon  int       `json:"horizon_weeks,omitempty"`
	Name     string    `json:"name"`
	Change   float64   `json:"change"`
	Low      float64   `json:"low"`  // 5% of the bootstrap
	High     float64   `json:"high"` // 95%
	Z        float64   `json:"z"`
	Changed  bool      `json:"changed"`
	Path     []float64 `json:"path"`      // β(t) of the drifting fit, every week
	PathLow  []float64 `json:"path_low"`  // 5% band of β(t)
	PathHigh []float64 `json:"path_high"` // 95% band
}

// EffectResult is the effectiveness evidence of a panel.
type EffectResult struct {
	Kind     string          `json:"kind"`
	Channels []EffectChannel `json:"channels"`
	ZCrit    float64         `json:"z_critical"`
	Alpha    float64         `json:"alpha"`
	// Replicates is the number of bootstrap refits that succeeded, of
	// Tried.
	Replicates int `json:"replicates"`
	Tried      int `json:"replicates_tried"`
	// BacktestRatio is the root mean squared error of the drifting
	// specification's forecasts over the constant one's, pooled over the
	// rolling origins (below 1: the drifting one forecasts better); 0 when
	// the history is too short for any origin.
	BacktestRatio float64 `json:"backtest_ratio"`
	Origins       []int   `json:"origins"`
	// Prefer is "drifting" when some channel's change is named and the
	// drifting specification forecasts at least as well out of sample,
	// else "constant".
	Prefer string   `json:"prefer"`
	Notes  []string `json:"notes,omitempty"`
	// Fit is the drifting fit of the whole history.
	Fit *model.FitResult `json:"-"`
}

// Effectiveness checks whether each channel's effectiveness has changed
// over the history. It fits the model with every channel drifting
// (model.EffectDrifting) and reads each channel's effectiveness in the last
// week over its mean over the history; a moving-block residual bootstrap of
// that fit (residuals inflated by √(n/(n−p)), every refit warm-started from
// the fit, same step priors) gives the change's interval and its SD on the
// log scale, and a channel is named as changed when |log change| exceeds
// the Bonferroni normal quantile times that SD. A rolling-origin backtest
// over the last weeks compares the drifting and constant specifications
// out of sample, where a late change matters. d is the user's design (its
// own effectiveness settings are replaced by all-drifting and all-constant).
//
// With Kind seasonal the model is fitted with every channel seasonal and
// the statistic is each channel's effectiveness over the next horizon over
// its yearly average (model.Design.SeasonLift): what a decision for the
// coming weeks gains from the season.
func Effectiveness(d *model.Design, y []float64, set EffectSettings) (*EffectResult, error) {
	set = set.withDefaults()
	var dd *model.Design
	var err error
	stat := func(p model.Params, k int) float64 { return dd.EffectChange(p, k) }
	switch set.Kind {
	case model.EffectDrifting:
		dd, err = d.WithDrifting([]string{"all"})
	case model.EffectSeasonal:
		dd, err = d.WithSeasonal([]string{"all"})
		stat = func(p model.Params, k int) float64 { return dd.SeasonLift(p, k) }
	default:
		return nil, fmt.Errorf("effectiveness: kind %q is not drifting or seasonal", set.Kind)
	}
	if err != nil {
		return nil, err
	}
	K := len(d.Spec.Channels)
	res := &EffectResult{Kind: set.Kind, Alpha: set.Alpha, Tried: set.Replicates, Prefer: model.EffectConstant}
	res.ZCrit = distuv.UnitNormal.Quantile(1 - set.Alpha/(2*float64(K)))
	if need := dd.Spec.NumParams() + 10; d.N < need {
		res.Tried = 0
		res.Notes = append(res.Notes, fmt.Sprintf("the %s check did not run: with every channel %s the model has %d parameters and needs at least %d weeks, the data have %d",
			set.Kind, set.Kind, dd.Spec.NumParams(), need, d.N))
		return res, nil
	}
	fit, err := dd.Fit(y, model.FitSettings{Seed: set.Seed, Workers: set.Workers})
	if err != nil {
		return nil, fmt.Errorf("%s fit: %w", set.Kind, err)
	}
	res.Fit = fit
	// Bootstrap of the drifting fit.
	n, p := d.N, dd.Spec.NumParams()
	infl := math.Sqrt(float64(n) / float64(max(1, n-p)))
	changes := make([][]float64, K)
	paths := make([][][]float64, K)
	warm := fit.Params.Clone()
	for i := range set.Replicates {
		rng := rand.New(rand.NewPCG(set.Seed, 0xeff0000+uint64(i)))
		ys := make([]float64, n)
		for t := 0; t < n; {
			s := rng.IntN(n - set.BlockWeeks + 1)
			for j := 0; j < set.BlockWeeks && t < n; j++ {
				ys[t] = fit.Fitted[t] + infl*fit.Residuals[s+j]
				t++
			}
		}
		fr, err := dd.Fit(ys, model.FitSettings{Warm: &warm, Priors: fit.Priors, NoiseSD: fit.NoiseSD, NoPriors: fit.Priors == nil})
		if err != nil {
			continue
		}
		res.Replicates++
		for k := range K {
			changes[k] = append(changes[k], stat(fr.Params, k))
			paths[k] = append(paths[k], dd.EffectPath(fr.Params, k))
		}
	}
	if res.Replicates < 10 {
		return nil, fmt.Errorf("effectiveness: only %d of %d bootstrap refits of the %s fit succeeded", res.Replicates, res.Tried, set.Kind)
	}
	if res.Replicates < res.Tried {
		res.Notes = append(res.Notes, fmt.Sprintf("%d of %d bootstrap refits failed and are left out", res.Tried-res.Replicates, res.Tried))
	}
	for k, c := range d.Spec.Channels {
		ec := EffectChannel{Kind: set.Kind, Horizon: d.Spec.Horizon, Name: c.Name, Change: stat(fit.Params, k), Path: dd.EffectPath(fit.Params, k)}
		logs := make([]float64, len(changes[k]))
		for i, v := range changes[k] {
			logs[i] = math.Log(math.Max(v, 1e-9))
		}
		sd := sdOf(logs)
		ec.Low, ec.High = quantileOf(changes[k], 0.05), quantileOf(changes[k], 0.95)
		if sd > 0 {
			ec.Z = math.Log(math.Max(ec.Change, 1e-9)) / sd
		}
		ec.Changed = math.Abs(ec.Z) > res.ZCrit
		ec.PathLow, ec.PathHigh = make([]float64, n), make([]float64, n)
		col := make([]float64, len(paths[k]))
		for t := range n {
			for i := range paths[k] {
				col[i] = paths[k][i][t]
			}
			ec.PathLow[t], ec.PathHigh[t] = quantileOf(col, 0.05), quantileOf(col, 0.95)
		}
		if ec.Low < 0.05 {
			res.Notes = append(res.Notes, fmt.Sprintf("%s: the %s fit cannot settle its effectiveness (the 90%% interval reaches zero)", c.Name, set.Kind))
		}
		res.Channels = append(res.Channels, ec)
	}
	// Rolling-origin backtest over the last weeks, both specifications.
	dc := d.WithConstant()
	var sseD, sseC float64
	for i := range set.Origins {
		origin := n - (set.Origins-i)*set.OriginWeeks
		if origin < dd.Spec.NumParams()+10 {
			continue
		}
		end := min(origin+set.OriginWeeks, n)
		fd, err := dd.Head(origin).Fit(y[:origin], model.FitSettings{Seed: set.Seed, Workers: set.Workers})
		if err != nil {
			return nil, fmt.Errorf("%s backtest fit on the first %d weeks: %w", set.Kind, origin, err)
		}
		fc, err := dc.Head(origin).Fit(y[:origin], model.FitSettings{Seed: set.Seed, Workers: set.Workers})
		if err != nil {
			return nil, fmt.Errorf("constant backtest fit on the first %d weeks: %w", origin, err)
		}
		pd, pc := dd.Predict(fd.Params), dc.Predict(fc.Params)
		for t := origin; t < end; t++ {
			sseD += (y[t] - pd[t]) * (y[t] - pd[t])
			sseC += (y[t] - pc[t]) * (y[t] - pc[t])
		}
		res.Origins = append(res.Origins, origin)
	}
	if len(res.Origins) == 0 {
		res.Notes = append(res.Notes, "the history is too short for the rolling-origin backtest; the choice rests on the bootstrap alone")
	} else if sseC > 0 {
		res.BacktestRatio = math.Sqrt(sseD / sseC)
	}
	res.Prefer = model.EffectConstant
	for _, c := range res.Channels {
		if c.Changed && (len(res.Origins) == 0 || res.BacktestRatio <= 1) {
			res.Prefer = set.Kind
		}
	}
	for _, c := range res.Channels {
		if c.Changed && res.Prefer == model.EffectConstant {
			res.Notes = append(res.Notes, fmt.Sprintf("%s's effectiveness is %s by the bootstrap, but that specification forecasts the last weeks worse (RMSE ratio %.2f): the constant one is kept", c.Name, set.Kind, res.BacktestRatio))
			break
		}
	}
	return res, nil
}

// Words describes channel c's change for a person: direction, size and
// interval, e.g. "effectiveness now 42% above its history average (90%
// interval +18% to +71%)".
func (c EffectChannel) Words() string {
	dir := "above"
	if c.Change < 1 {
		dir = "below"
	}
	if c.Kind == model.EffectSeasonal {
		return fmt.Sprintf("effectiveness over the next %d weeks %.0f%% %s its yearly average (90%% interval %+.0f%% to %+.0f%%)",
			c.Horizon, 100*math.Abs(c.Change-1), dir, 100*(c.Low-1), 100*(c.High-1))
	}
	return fmt.Sprintf("effectiveness in the last week %.0f%% %s its history average (90%% interval %+.0f%% to %+.0f%%)",
		100*math.Abs(c.Change-1), dir, 100*(c.Low-1), 100*(c.High-1))
}

// Checks turns the result into evidence: one stability check per channel
// ("effect/drift", or "effect/season" for the seasonal kind: a warning when
// its effectiveness has changed, since the constant model then reads the
// history's average rather than today's or the coming season's) and one
// accuracy check ("effect/backtest" or "effect/season_backtest",
// informational: the backtest RMSE ratio).
func (r *EffectResult) Checks() []Check {
	var out []Check
	for _, c := range r.Channels {
		st := Pass
		if c.Changed {
			st = Warn
		}
		out = append(out, check(r.checkName("effect/drift", "effect/season"), Stability, c.Name, st, c.Z, r.ZCrit, "%s; |z| %.2f against %.2f (family-wise false-alarm share %.0f%% over the channels)",
			c.Words(), math.Abs(c.Z), r.ZCrit, 100*r.Alpha))
	}
	if len(r.Origins) > 0 {
		out = append(out, check(r.checkName("effect/backtest", "effect/season_backtest"), Accuracy, Global, Pass, r.BacktestRatio, 1,
			r.Kind+" over constant specification, RMSE of the forecasts from %d rolling origins over the last weeks: %.3f; preferred: %s",
			len(r.Origins), r.BacktestRatio, r.Prefer))
	}
	return out
}

func (r *EffectResult) checkName(drifting, seasonal string) string {
	if r.Kind == model.EffectSeasonal {
		return seasonal
	}
	return drifting
}

func sdOf(x []float64) float64 {
	if len(x) < 2 {
		return 0
	}
	var m float64
	for _, v := range x {
		m += v
	}
	m /= float64(len(x))
	var s float64
	for _, v := range x {
		s += (v - m) * (v - m)
	}
	return math.Sqrt(s / float64(len(x)-1))
}

// quantileOf is the project's sample quantile (Hyndman–Fan type 8).
func quantileOf(x []float64, q float64) float64 {
	return sample.Quantiles(x, q)[0]
}
