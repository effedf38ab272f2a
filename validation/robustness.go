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

	// Decay bounds: the fit again with every channel's upper decay bound
	// widened (WideUpper); DecayWide is the relative change of ROI, and
	// DecayOnBound whether the fitted decay sat on its upper bound.
	// RecoverySD, filled by Run from the recovery check, is each channel's
	// ROI SD on panels simulated from the fit: the noise a change of ROI is
	// measured against.
	WideUpper    []float64
	DecayWide    []float64
	DecayOnBound []bool
	RecoverySD   []float64

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

// WideDecayMax is the widened upper decay bound of the decay-bounds check:
// the default box's upper bound extended by a third of its width, at most
// this. Only the upper bound moves, where slow carryover and the baseline
// trade off. The box is only widened, never narrowed: narrowing it would
// flag every channel whose true decay lies above the narrowed bound.
const WideDecayMax = 0.95

// blockChanges refits y once per block of BlockWeeks weeks with that block
// left out of the objective (the transforms still see its spend), warm from
// p, and returns per channel the largest |relative change| of ROI against
// roi (scaled by max(|ROI|, floor)) with the first week of its block, and
// the number of refits that failed. The data and the simulated panels of
// the quarter-out null go through this one function.
func blockChanges(d *model.Design, y []float64, p model.Params, roi []float64, floor float64, set Settings, workers int, tick func()) (maxRel []float64, worst []int, failed int) {
	K := len(roi)
	blocks := max(1, d.N/set.BlockWeeks)
	blockROI := make([][]float64, blocks)
	parallel(blocks, workers, func(b int) {
		from, to := b*set.BlockWeeks, (b+1)*set.BlockWeeks
		if b == blocks-1 {
			to = d.N
		}
		keep := make([]bool, d.N)
		for t := range keep {
			keep[t] = t < from || t >= to
		}
		warm := p
		f, err := d.Rows(keep).Fit(y, model.FitSettings{Seed: set.Seed, Warm: &warm})
		if err == nil {
			out := make([]float64, K)
			for k, s := range d.Summarize(f.Params, set.ValuePerKPI) {
				out[k] = s.ROI
			}
			blockROI[b] = out
		}
		if tick != nil {
			tick()
		}
	})
	maxRel, worst = make([]float64, K), make([]int, K)
	for b, br := range blockROI {
		if br == nil {
			failed++
			continue
		}
		for k := range K {
			if c := math.Abs((br[k] - roi[k]) / max(math.Abs(roi[k]), floor)); c > maxRel[k] {
				maxRel[k], worst[k] = c, b*set.BlockWeeks
			}
		}
	}
	return maxRel, worst, failed
}

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
	var done counter
	r.Blocks = max(1, d.N/set.BlockWeeks)
	r.QuarterOut, r.QuarterWorst, r.BlockFailed = blockChanges(d, y, fit.Params, r.ROI, r.Floor, set, set.Workers,
		func() { set.progress("stability", done.inc(), r.Blocks+3) })
	if r.BlockFailed == r.Blocks {
		return nil, fmt.Errorf("stability: none of the %d leave-one-block-out refits produced a fit", r.Blocks)
	}

	// (b) and (c): three refits, run in parallel.
	wide := *d
	wide.Spec.Channels = slices.Clone(d.Spec.Channels)
	for k, c := range d.Spec.Channels {
		w := c.Decay[1] - c.Decay[0]
		wide.Spec.Channels[k].Decay[1] = max(c.Decay[1], min(WideDecayMax, c.Decay[1]+w/3))
		r.WideUpper = append(r.WideUpper, wide.Spec.Channels[k].Decay[1])
		r.DecayOnBound = append(r.DecayOnBound, fit.Params.Channels[k].Decay >= c.Decay[1]-1e-3*max(w, 1e-9))
	}
	r.Split = d.N / 2
	first, second := halves(d.N)
	multi := model.FitSettings{Seed: set.Seed, Starts: d.Spec.Starts, Warm: &fit.Params}
	pinned := pinShapes(d, fit.Params)
	warm := model.FitSettings{Seed: set.Seed, Warm: &fit.Params}
	fits := []func() (*model.FitResult, error){
		func() (*model.FitResult, error) { return wide.Fit(y, multi) },
		func() (*model.FitResult, error) { return pinned.Rows(first).Fit(y, warm) },
		func() (*model.FitResult, error) { return pinned.Rows(second).Fit(y, warm) },
	}
	names := []string{"widened decay bounds", "first half", "second half"}
	res := make([][]float64, len(fits))
	errs := make([]error, len(fits))
	var halfFits [2]*model.FitResult
	parallel(len(fits), set.Workers, func(i int) {
		f, err := fits[i]()
		if err == nil {
			res[i] = roiOf(f.Params)
			if i >= 1 {
				halfFits[i-1] = f
			}
		}
		errs[i] = err
		set.progress("stability", done.inc(), r.Blocks+3)
	})
	if errs[0] != nil {
		return nil, fmt.Errorf("stability refit with %s: %w", names[0], errs[0])
	}
	for k := range K {
		r.DecayWide = append(r.DecayWide, rel(res[0], k))
	}
	// A half the model cannot be fitted on (a control constant there) leaves
	// drift unjudged rather than failing the run.
	for i, err := range errs[1:] {
		if err != nil {
			r.DriftErr = fmt.Errorf("%s: %w", names[1+i], err)
			return r, nil
		}
	}
	r.FirstHalf, r.SecondHalf = res[1], res[2]
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

// zeroEffect says whether a channel's ROI is fitted to zero, when checks
// that compare ROIs would compare 0 with 0 and prove nothing.
func zeroEffect(roi, floor float64) bool { return math.Abs(roi) <= 1e-9*floor }

// zeroCheck is a check that cannot be judged because the channel's effect
// is fitted to zero: it fails, so it never passes by comparing 0 with 0.
func zeroCheck(name string, f Family, scope string, threshold float64) Check {
	return Check{Name: name, Family: f, Scope: scope, Status: Fail, Threshold: threshold,
		Detail: "not judged: the channel's effect is fitted to zero, and a zero compared with zero proves nothing; hint: check its spend varies and is not spent together with another channel"}
}

// Checks grades the result, three checks per channel. quarter_out gets
// its p-value in Run (from the simulated panels); decay_bounds and drift
// carry theirs here.
func (r *RobustResult) Checks(th Thresholds) []Check {
	var out []Check
	for k, name := range r.Channels {
		if zeroEffect(r.ROI[k], r.Floor) {
			out = append(out, zeroCheck("stability/quarter_out", Stability, name, th.QuarterOut.Fail),
				zeroCheck("stability/decay_bounds", Stability, name, th.DecayBounds.Fail),
				zeroCheck("stability/drift", Stability, name, th.DriftZ.Fail))
			continue
		}
		q := r.QuarterOut[k]
		detail := fmt.Sprintf("ROI %.3g; refitted %d times, each without one block of %d weeks: largest change %.0f%% (without weeks %d–%d)",
			r.ROI[k], r.Blocks-r.BlockFailed, r.BlockWeeks, 100*q, r.QuarterWorst[k]+1, r.QuarterWorst[k]+r.BlockWeeks)
		if r.BlockFailed > 0 {
			detail += fmt.Sprintf(" (%d refits failed)", r.BlockFailed)
		}
		out = append(out, Check{Name: "stability/quarter_out", Family: Stability, Scope: name,
			Status: th.QuarterOut.above(q), Metric: finite(q), Threshold: th.QuarterOut.Fail, Detail: detail})

		// Decay bounds: the ROI change when the box is widened, against the
		// ROI's noise on panels simulated from the fit (the recovery SD).
		b := math.Abs(r.DecayWide[k])
		bound := "inside its bounds"
		if r.DecayOnBound[k] {
			bound = "on its upper bound"
		}
		dc := check("stability/decay_bounds", Stability, name, th.DecayBounds.above(b), b, th.DecayBounds.Fail,
			"fitted decay %s; ROI changes %+.0f%% with the upper decay bound widened to %.2g",
			bound, 100*r.DecayWide[k], r.WideUpper[k])
		if k < len(r.RecoverySD) && r.RecoverySD[k] > 0 {
			z := b * max(math.Abs(r.ROI[k]), r.Floor) / r.RecoverySD[k]
			dc.PValue, dc.Null = ptr(twoSidedNormal(z)), "normal"
			dc.Detail += fmt.Sprintf(": %.2g times the ROI's SD %.3g on panels simulated from the fit", z, r.RecoverySD[k])
		}
		out = append(out, dc)
		if r.DriftErr != nil {
			out = append(out, Check{Name: "stability/drift", Family: Stability, Scope: name, Status: Warn,
				Threshold: th.DriftZ.Fail, Detail: "not judged: the model cannot be fitted on " + r.DriftErr.Error()})
			continue
		}
		z := r.Drift[k]
		if r.DriftScaled {
			// The difference over its SD from R simulated panels, as a
			// prediction: t = d / (SD √(1 + 1/R)) has R − 1 degrees of freedom.
			rr := float64(r.DriftReplicates)
			c := check("stability/drift", Stability, name, th.DriftZ.above(z), z, th.DriftZ.Fail,
				"ROI %.3g fitted on weeks 1–%d, %.3g on weeks %d–end: %.1f times the SD %.3g of that difference on %d panels simulated without drift",
				r.FirstHalf[k], r.Split, r.SecondHalf[k], r.Split+1, z, r.DriftSD[k], r.DriftReplicates)
			c.PValue, c.Null = ptr(twoSidedT(z/math.Sqrt(1+1/rr), rr-1)), "student t"
			out = append(out, c)
		} else {
			out = append(out, check("stability/drift", Stability, name, th.DriftRelative.above(z), z, th.DriftRelative.Fail,
				"ROI %.3g fitted on weeks 1–%d, %.3g on weeks %d–end: %.0f%% apart (too few simulated panels to measure the noise); warn above %.0f%%",
				r.FirstHalf[k], r.Split, r.SecondHalf[k], r.Split+1, 100*z, 100*th.DriftRelative.Warn))
		}
	}
	return out
}
