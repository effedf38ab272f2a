package validation

import (
	"fmt"
	"math"
	"slices"

	"sluice/model"
	"sluice/uncertainty"
)

// RobustResult is the stability and robustness of the fit: leave-one-block-
// out refits, refits under other decay bounds, and the two halves fitted
// separately. Relative changes are (ROI' − ROI) / max(|ROI|, Floor).
type RobustResult struct {
	Channels []string
	ROI      []float64
	Floor    float64

	BlockWeeks, Blocks int
	BlockFailed        int
	QuarterOut         []float64 // per channel, the largest |relative change| over the blocks
	QuarterWorst       []int     // per channel, the first week of that block

	NarrowUpper, WideUpper []float64 // per channel, the upper decay bound of each refit
	DecayNarrow, DecayWide []float64 // per channel, relative change

	Split      int       // first week of the second half
	FirstHalf  []float64 // per channel, ROI (over all weeks) of the first half's fit
	SecondHalf []float64
	// DriftSD is the SD of the halves' difference over the panels
	// simulated without drift, from DriftReplicates successful ones. Drift
	// is |first − second| / DriftSD, or, with fewer than 2 replicates, the
	// relative difference |first − second| / max(|ROI|, Floor).
	DriftSD         []float64
	DriftReplicates int
	Drift           []float64
	DriftScaled     bool  // whether Drift is a z
	DriftErr        error // why a half could not be fitted; drift is then not judged

	halfFits [2]*model.FitResult
}

// driftStream offsets the replicate streams of the drift simulation from
// those of Recover, so the two do not reuse the same resampling draws.
const driftStream = 1 << 20

// pinShapes returns a copy of d whose nonlinear parameters (decay, peak,
// half saturation, shape) are pinned to p's by zero-width bounds, so a fit
// on it only solves the linear coefficients.
func pinShapes(d *model.Design, p model.Params) *model.Design {
	pd := *d
	pd.Spec.Channels = slices.Clone(d.Spec.Channels)
	for k := range pd.Spec.Channels {
		c, cp := &pd.Spec.Channels[k], p.Channels[k]
		c.Decay = model.Range{cp.Decay, cp.Decay}
		c.HalfSaturation = model.Range{cp.HalfSat, cp.HalfSat}
		if c.Adstock == model.AdstockDelayed {
			c.Peak = model.Range{cp.Peak, cp.Peak}
		}
		if c.Saturation == model.SaturationHill {
			c.Shape = model.Range{cp.Shape, cp.Shape}
		}
	}
	return &pd
}

// driftNull simulates the halves' ROI difference without drift.
func (r *RobustResult) driftNull(d *model.Design, y []float64, fit *model.FitResult, set Settings) {
	first, second := halves(d.N)
	pinned := pinShapes(d, fit.Params)
	resid := make([]float64, d.N)
	for i, f := range r.halfFits {
		for t := range resid {
			if (i == 0) == first[t] {
				resid[t] = y[t] - f.Fitted[t]
			}
		}
	}
	// Each half's fit spends the linear coefficients on n/2 weeks.
	p := d.Spec.NumFixed() + len(d.Spec.Channels)
	sim := newSimulator(fit.Fitted, resid, float64(d.N)/float64(max(d.N-2*p, 1)))
	K := len(r.Channels)
	diffs := make([][]float64, set.Replicates)
	var done counter
	parallel(set.Replicates, set.Workers, func(i int) {
		ys := sim.panel(uncertainty.Stream(set.Seed, driftStream+i))
		warm := model.FitSettings{Seed: set.Seed, Warm: &fit.Params}
		f1, err1 := pinned.Rows(first).Fit(ys, warm)
		f2, err2 := pinned.Rows(second).Fit(ys, warm)
		if err1 == nil && err2 == nil {
			s1, s2 := d.Summarize(f1.Params, set.ValuePerKPI), d.Summarize(f2.Params, set.ValuePerKPI)
			row := make([]float64, K)
			for k := range row {
				row[k] = s1[k].ROI - s2[k].ROI
			}
			diffs[i] = row
		}
		set.progress("drift", done.inc(), set.Replicates)
	})
	for _, row := range diffs {
		if row != nil {
			r.DriftReplicates++
		}
	}
	if r.DriftReplicates < 2 {
		return
	}
	r.DriftScaled = true
	for k := range K {
		var x []float64
		for _, row := range diffs {
			if row != nil {
				x = append(x, row[k])
			}
		}
		r.DriftSD = append(r.DriftSD, sd(x))
	}
}

// Narrowed and widened decay bounds of the robustness refits: only the
// upper bound moves, where slow carryover and the baseline trade off; the
// narrow box keeps the lower two thirds of the range, the wide one extends
// it by a third, to at most WideDecayMax.
const (
	NarrowDecayShare = 2.0 / 3
	WideDecayMax     = 0.95
)

// Robustness refits the model (a) once per block of BlockWeeks weeks with
// that block left out of the objective (the transforms still see its spend),
// warm from the fit; (b) with the decay bounds narrowed and widened, from
// the fit and the usual random starts; (c) on each half of the weeks
// separately. spread, if it has an SD per channel, turns the halves'
// difference into a z.
func Robustness(d *model.Design, y []float64, fit *model.FitResult, set Settings) (*RobustResult, error) {
	set = set.withDefaults()
	point := d.Summarize(fit.Params, set.ValuePerKPI)
	K := len(point)
	r := &RobustResult{ROI: make([]float64, K), Floor: roiFloor(d, point, set.ValuePerKPI), BlockWeeks: set.BlockWeeks}
	for k, s := range point {
		r.Channels = append(r.Channels, s.Name)
		r.ROI[k] = s.ROI
	}
	roiOf := func(p model.Params) []float64 {
		out := make([]float64, K)
		for k, s := range d.Summarize(p, set.ValuePerKPI) {
			out[k] = s.ROI
		}
		return out
	}
	rel := func(roi []float64, k int) float64 {
		return (roi[k] - r.ROI[k]) / max(math.Abs(r.ROI[k]), r.Floor)
	}

	// (a) Leave one block out; the last block takes the remainder.
	r.Blocks = max(1, d.N/set.BlockWeeks)
	blockROI := make([][]float64, r.Blocks)
	var done counter
	parallel(r.Blocks, set.Workers, func(b int) {
		from, to := b*set.BlockWeeks, (b+1)*set.BlockWeeks
		if b == r.Blocks-1 {
			to = d.N
		}
		keep := make([]bool, d.N)
		for t := range keep {
			keep[t] = t < from || t >= to
		}
		warm := fit.Params
		f, err := d.Rows(keep).Fit(y, model.FitSettings{Seed: set.Seed, Warm: &warm})
		if err == nil {
			blockROI[b] = roiOf(f.Params)
		}
		set.progress("stability", done.inc(), r.Blocks+4)
	})
	r.QuarterOut = make([]float64, K)
	r.QuarterWorst = make([]int, K)
	for b, roi := range blockROI {
		if roi == nil {
			r.BlockFailed++
			continue
		}
		for k := range K {
			if c := math.Abs(rel(roi, k)); c > r.QuarterOut[k] {
				r.QuarterOut[k], r.QuarterWorst[k] = c, b*set.BlockWeeks
			}
		}
	}
	if r.BlockFailed == r.Blocks {
		return nil, fmt.Errorf("stability: none of the %d leave-one-block-out refits produced a fit", r.Blocks)
	}

	// (b) and (c): four refits, run in parallel.
	narrow, wide := *d, *d
	narrow.Spec.Channels = slices.Clone(d.Spec.Channels)
	wide.Spec.Channels = slices.Clone(d.Spec.Channels)
	for k, c := range d.Spec.Channels {
		w := c.Decay[1] - c.Decay[0]
		narrow.Spec.Channels[k].Decay[1] = c.Decay[0] + NarrowDecayShare*w
		wide.Spec.Channels[k].Decay[1] = max(c.Decay[1], min(WideDecayMax, c.Decay[1]+w/3))
		r.NarrowUpper = append(r.NarrowUpper, narrow.Spec.Channels[k].Decay[1])
		r.WideUpper = append(r.WideUpper, wide.Spec.Channels[k].Decay[1])
	}
	r.Split = d.N / 2
	first, second := halves(d.N)
	multi := model.FitSettings{Seed: set.Seed, Starts: d.Spec.Starts, Warm: &fit.Params}
	pinned := pinShapes(d, fit.Params)
	warm := model.FitSettings{Seed: set.Seed, Warm: &fit.Params}
	fits := []func() (*model.FitResult, error){
		func() (*model.FitResult, error) { return narrow.Fit(y, multi) },
		func() (*model.FitResult, error) { return wide.Fit(y, multi) },
		func() (*model.FitResult, error) { return pinned.Rows(first).Fit(y, warm) },
		func() (*model.FitResult, error) { return pinned.Rows(second).Fit(y, warm) },
	}
	names := []string{"narrowed decay bounds", "widened decay bounds", "first half", "second half"}
	res := make([][]float64, len(fits))
	errs := make([]error, len(fits))
	var halfFits [2]*model.FitResult
	parallel(len(fits), set.Workers, func(i int) {
		f, err := fits[i]()
		if err == nil {
			res[i] = roiOf(f.Params)
			if i >= 2 {
				halfFits[i-2] = f
			}
		}
		errs[i] = err
		set.progress("stability", done.inc(), r.Blocks+4)
	})
	for i, err := range errs[:2] {
		if err != nil {
			return nil, fmt.Errorf("stability refit with %s: %w", names[i], err)
		}
	}
	for k := range K {
		r.DecayNarrow = append(r.DecayNarrow, rel(res[0], k))
		r.DecayWide = append(r.DecayWide, rel(res[1], k))
	}
	// A half the model cannot be fitted on (a control constant there) leaves
	// drift unjudged rather than failing the run.
	for i, err := range errs[2:] {
		if err != nil {
			r.DriftErr = fmt.Errorf("%s: %w", names[2+i], err)
			return r, nil
		}
	}
	r.FirstHalf, r.SecondHalf = res[2], res[3]
	r.halfFits = [2]*model.FitResult{halfFits[0], halfFits[1]}
	r.driftNull(d, y, fit, set)
	for k := range K {
		diff := math.Abs(r.FirstHalf[k] - r.SecondHalf[k])
		scale := max(math.Abs(r.ROI[k]), r.Floor)
		if r.DriftScaled {
			// A spread of zero (a channel every refit put at ROI 0) is
			// floored at 1% of the ROI scale.
			r.Drift = append(r.Drift, diff/max(r.DriftSD[k], 0.01*scale))
		} else {
			r.Drift = append(r.Drift, diff/scale)
		}
	}
	return r, nil
}

// Checks grades the result, three or four checks per channel.
func (r *RobustResult) Checks(th Thresholds) []Check {
	var out []Check
	for k, name := range r.Channels {
		q := r.QuarterOut[k]
		detail := fmt.Sprintf("ROI %.3g; refitted %d times, each without one block of %d weeks: largest change %.0f%% (without weeks %d–%d); warn above %.0f%%",
			r.ROI[k], r.Blocks-r.BlockFailed, r.BlockWeeks, 100*q, r.QuarterWorst[k]+1, r.QuarterWorst[k]+r.BlockWeeks, 100*th.QuarterOut.Warn)
		if r.BlockFailed > 0 {
			detail += fmt.Sprintf(" (%d refits failed)", r.BlockFailed)
		}
		out = append(out, Check{Name: "stability/quarter_out", Family: Stability, Scope: name,
			Status: th.QuarterOut.above(q), Metric: finite(q), Threshold: th.QuarterOut.Fail, Detail: detail})
		b := max(math.Abs(r.DecayNarrow[k]), math.Abs(r.DecayWide[k]))
		out = append(out, check("stability/decay_bounds", Stability, name, th.DecayBounds.above(b), b, th.DecayBounds.Fail,
			"ROI changes %+.0f%% with the upper decay bound at %.2g, %+.0f%% at %.2g; warn above %.0f%%",
			100*r.DecayNarrow[k], r.NarrowUpper[k], 100*r.DecayWide[k], r.WideUpper[k], 100*th.DecayBounds.Warn))
		if r.DriftErr != nil {
			out = append(out, Check{Name: "stability/drift", Family: Stability, Scope: name, Status: Warn,
				Threshold: th.DriftZ.Fail, Detail: "not judged: the model cannot be fitted on " + r.DriftErr.Error()})
			continue
		}
		z := r.Drift[k]
		if r.DriftScaled {
			out = append(out, check("stability/drift", Stability, name, th.DriftZ.above(z), z, th.DriftZ.Fail,
				"ROI %.3g fitted on weeks 1–%d, %.3g on weeks %d–end: %.1f times the SD %.3g of that difference on %d panels simulated without drift; warn above %.2g",
				r.FirstHalf[k], r.Split, r.SecondHalf[k], r.Split+1, z, r.DriftSD[k], r.DriftReplicates, th.DriftZ.Warn))
		} else {
			out = append(out, check("stability/drift", Stability, name, th.DriftRelative.above(z), z, th.DriftRelative.Fail,
				"ROI %.3g fitted on weeks 1–%d, %.3g on weeks %d–end: %.0f%% apart (too few simulated panels to measure the noise); warn above %.0f%%",
				r.FirstHalf[k], r.Split, r.SecondHalf[k], r.Split+1, 100*z, 100*th.DriftRelative.Warn))
		}
	}
	return out
}
