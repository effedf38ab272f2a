package validation

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"sluice/model"
	"sluice/uncertainty"
)

// RecoverResult is the parameter-recovery check: panels simulated from the
// fitted model itself, refitted, and the refits' ROI compared with the ROI
// they were simulated from.
type RecoverResult struct {
	Channels    []string
	ROI         []float64   // per channel, of the fit the panels come from (the truth here)
	Refit       [][]float64 // [replicate][channel] ROI of each refit; nil row for a failed refit
	Failed      int         // refits that produced no fit
	BlockLength int         // of the moving-block resampling of the residuals
	Inflation   float64     // factor the residuals were scaled by before resampling
	// Per channel, over the successful refits: the median of
	// |ROI_r − ROI| / scale and of (ROI_r − ROI) / scale, and the SD of ROI_r.
	// scale is max(|ROI|, Floor), so a channel fitted at ROI 0 does not
	// divide by zero.
	MedianAbsError []float64
	MedianError    []float64
	SD             []float64
	Floor          float64 // a tenth of the ROI of all media together

	// SpendVIF is each channel's variance inflation factor in the spend
	// data (see SpendVIF).
	SpendVIF []float64
}

// Recover simulates Replicates panels from the fit: the same spend and
// controls, the KPI = fitted + the fit's residuals (inflated for the
// degrees of freedom the fit used) resampled in moving blocks, so the noise
// keeps its size and serial dependence (see newSimulator). Each panel is refitted warm
// from the fit, in parallel, and the ROI of every channel is compared with
// the fit's. A channel whose spend the data cannot tell apart from another
// channel's or from the baseline (spent together, or flat) comes back with
// a different ROI every time: recovery fails for it.
func Recover(d *model.Design, fit *model.FitResult, set Settings) (*RecoverResult, error) {
	return recoverWith(d, fit, set, nil)
}

// recoverWith is Recover; with nv, each simulated panel also yields the
// accuracy and quarter-out metrics the checks of the data are compared
// with (nullAccuracy, blockChanges), so one set of simulated panels and
// their refits serves recovery and those checks' false-alarm rates.
func recoverWith(d *model.Design, fit *model.FitResult, set Settings, nv *nullValues) (*RecoverResult, error) {
	set = set.withDefaults()
	point := d.Summarize(fit.Params, set.ValuePerKPI)
	K := len(point)
	r := &RecoverResult{ROI: make([]float64, K), Refit: make([][]float64, set.Replicates)}
	for k, s := range point {
		r.Channels = append(r.Channels, s.Name)
		r.ROI[k] = s.ROI
	}
	r.Floor = roiFloor(d, point, set.ValuePerKPI)
	r.SpendVIF = SpendVIF(d)
	sim := newSimulator(fit.Fitted, fit.Residuals, float64(d.N)/float64(max(d.N-d.Spec.NumParams(), 1)))
	r.Inflation, r.BlockLength = sim.inflation, sim.block
	var done counter
	parallel(set.Replicates, set.Workers, func(i int) {
		y := sim.panel(uncertainty.Stream(set.Seed, i))
		warm := fit.Params
		f, err := d.Fit(y, model.FitSettings{Seed: set.Seed, Warm: &warm})
		if err == nil {
			sum := d.Summarize(f.Params, set.ValuePerKPI)
			row := make([]float64, K)
			for k, s := range sum {
				row[k] = s.ROI
			}
			r.Refit[i] = row
			if nv != nil {
				nullAccuracy(d, y, f.Params, set, nv)
				q, _, failed := blockChanges(d, y, f.Params, row, roiFloor(d, sum, set.ValuePerKPI), set, 1, nil)
				if failed == 0 {
					for k, c := range d.Spec.Channels {
						nv.add("stability/quarter_out/"+c.Name, q[k])
					}
				}
			}
		}
		set.progress("recovery", done.inc(), set.Replicates)
	})
	for _, row := range r.Refit {
		if row == nil {
			r.Failed++
		}
	}
	if r.Failed == len(r.Refit) {
		return nil, fmt.Errorf("recovery: none of %d refits produced a fit", len(r.Refit))
	}
	for k := range K {
		var abs, sgn, roi []float64
		scale := max(math.Abs(r.ROI[k]), r.Floor)
		for _, row := range r.Refit {
			if row == nil {
				continue
			}
			e := (row[k] - r.ROI[k]) / scale
			abs = append(abs, math.Abs(e))
			sgn = append(sgn, e)
			roi = append(roi, row[k])
		}
		r.MedianAbsError = append(r.MedianAbsError, median(abs))
		r.MedianError = append(r.MedianError, median(sgn))
		r.SD = append(r.SD, sd(roi))
	}
	return r, nil
}

// SpendVIF returns, per channel, the variance inflation factor of its
// weekly spend given the other channels' spend and the fixed columns
// (intercept, trend, season, controls): 1/(1 − R²) of that regression
// (Belsley, Kuh & Welsch 1980, Regression Diagnostics, from memory). Two
// channels spent together both get a large one; the refits of the recovery
// check then trade their effects off against each other. It is a property
// of the data alone, so it does not depend on where the fit landed (a fit
// can pull confounded channels' curves apart to make their media columns
// look unrelated). +Inf when the spend is an exact combination.
func SpendVIF(d *model.Design) []float64 {
	K := len(d.Spend)
	_, nf := d.Fixed.Dims()
	out := make([]float64, K)
	for k := range K {
		x := mat.NewDense(d.N, nf+K-1, nil)
		x.Slice(0, d.N, 0, nf).(*mat.Dense).Copy(d.Fixed)
		c := nf
		for l := range K {
			if l != k {
				x.SetCol(c, d.Spend[l])
				c++
			}
		}
		y := d.Spend[k]
		var m float64
		for _, v := range y {
			m += v
		}
		m /= float64(d.N)
		var sst float64
		for _, v := range y {
			sst += (v - m) * (v - m)
		}
		var qr mat.QR
		qr.Factorize(x)
		var b, pred mat.VecDense
		if err := qr.SolveVecTo(&b, false, mat.NewVecDense(d.N, slices.Clone(y))); err != nil {
			out[k] = math.Inf(1)
			continue
		}
		pred.MulVec(x, &b)
		var ssr float64
		for t, v := range y {
			e := v - pred.AtVec(t)
			ssr += e * e
		}
		switch {
		case sst == 0:
			out[k] = math.Inf(1) // constant spend: the intercept explains it all
		case ssr <= 1e-12*sst:
			out[k] = math.Inf(1)
		default:
			out[k] = sst / ssr
		}
	}
	return out
}

// roiFloor is a tenth of the ROI of all media together (their contribution
// over their spend), the smallest ROI relative errors are taken against; a
// tiny positive number when the model has no media effect at all.
func roiFloor(d *model.Design, s []model.ChannelSummary, valuePerKPI float64) float64 {
	var c, x float64
	for k, cs := range s {
		c += cs.Contribution
		for _, v := range d.Spend[k] {
			x += v
		}
	}
	if x <= 0 || c <= 0 {
		return 1e-9
	}
	return 0.1 * c * valuePerKPI / x
}

// simulator draws KPI series from a fit: fitted + resampled residuals.
type simulator struct {
	fitted, resid []float64
	rs            uncertainty.Resampler
	inflation     float64
	block         int
}

// newSimulator resamples resid scaled by √varRatio. Fitted residuals are
// smaller than the noise by about √((n−p)/n) with p parameters; inflating
// them by √(n/(n−p)) gives the simulated panels the noise the data had (the
// variance correction of residual resampling in regression; Davison &
// Hinkley 1997, Bootstrap Methods and their Application, section 6.2.3, from
// memory). Blocks are moving blocks of the Politis & White (2004) length,
// keeping the residuals' serial dependence.
func newSimulator(fitted, resid []float64, varRatio float64) *simulator {
	s := &simulator{fitted: fitted, inflation: math.Sqrt(varRatio), resid: make([]float64, len(resid))}
	for t, e := range resid {
		s.resid[t] = s.inflation * e
	}
	bl := uncertainty.AutoBlockLength(s.resid)
	s.rs = uncertainty.Resampler{Method: uncertainty.MovingBlock, BlockLength: bl.Circular}
	s.block = int(math.Ceil(max(1, bl.Circular)))
	return s
}

func (s *simulator) panel(rng *rand.Rand) []float64 {
	y := s.rs.Residuals(make([]float64, len(s.resid)), s.resid, rng)
	for t := range y {
		y[t] += s.fitted[t]
	}
	return y
}

// halves returns the keep masks of the first and second half of n weeks.
func halves(n int) (first, second []bool) {
	first, second = make([]bool, n), make([]bool, n)
	for t := range first {
		first[t], second[t] = t < n/2, t >= n/2
	}
	return first, second
}

// Checks grades the result, three checks per channel. They measure how
// precisely the data settle each channel's ROI (Basis "precision"), not
// whether the model is right; a channel whose effect is fitted to zero
// fails them (nothing was recovered) and is acted on.
func (r *RecoverResult) Checks(th Thresholds) []Check {
	var out []Check
	n := len(r.Refit) - r.Failed
	for k, name := range r.Channels {
		e, b, v := r.MedianAbsError[k], r.MedianError[k], r.SpendVIF[k]
		cs := []Check{
			check("recovery/spend_collinearity", Recovery, name, th.SpendVIF.above(v), v, th.SpendVIF.Fail,
				"variance inflation %.3g: %.0f%% of the variation of its spend follows the other channels' spend and the baseline; warn above %.3g",
				v, 100*(1-1/v), th.SpendVIF.Warn),
		}
		if zeroEffect(r.ROI[k], r.Floor) {
			cs = append(cs, zeroCheck("recovery/roi_error", Recovery, name, th.RecoveryError.Fail),
				zeroCheck("recovery/roi_bias", Recovery, name, th.RecoveryBias.Fail))
		} else {
			cs = append(cs,
				check("recovery/roi_error", Recovery, name, th.RecoveryError.above(e), e, th.RecoveryError.Fail,
					"refitted on %d panels simulated from the fit (ROI %.3g): median |error| %.0f%%, ROI SD %.3g; warn above %.0f%%",
					n, r.ROI[k], 100*e, r.SD[k], 100*th.RecoveryError.Warn),
				check("recovery/roi_bias", Recovery, name, th.RecoveryBias.above(math.Abs(b)), math.Abs(b), th.RecoveryBias.Fail,
					"median signed error of the refits' ROI %+.0f%%; warn above %.0f%%", 100*b, 100*th.RecoveryBias.Warn))
			cs[1].Basis, cs[2].Basis = BasisPrecision, BasisPrecision
		}
		cs[0].Basis = BasisPrecision
		out = append(out, cs...)
	}
	if r.Failed > 0 {
		for i := range out {
			out[i].Detail += fmt.Sprintf(" (%d of %d refits failed)", r.Failed, len(r.Refit))
		}
	}
	return out
}

// sd is the sample standard deviation (n − 1 denominator, gonum/stat); 0
// for fewer than two values.
func sd(x []float64) float64 {
	if len(x) < 2 {
		return 0
	}
	return stat.StdDev(x, nil)
}
