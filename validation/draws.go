package validation

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat"

	"sluice/model"
)

// Draws are fitted models of bootstrap replicates, one Params per
// successful replicate, as the uncertainty package produces them. Failed
// counts the replicates that produced no fit.
type Draws struct {
	Params []model.Params
	Failed int
}

// DrawsResult is the spread of each channel's ROI and marginal ROI over the
// draws.
type DrawsResult struct {
	Channels  []string
	N, Failed int
	ROIMean   []float64
	ROISD     []float64
	ROICV     []float64 // SD / |mean|; +Inf when the mean is 0 and the SD is not
	PointMROI []float64
	// Flip is the share of draws whose marginal ROI lies on the other side
	// of the break-even than the point fit's (a draw exactly at it counts as
	// on the other side).
	Flip      []float64
	BreakEven float64
}

// DrawSpread summarizes draws against the point fit; breakEven is the
// marginal ROI at which a channel pays for itself (Thresholds.BreakEven).
func DrawSpread(d *model.Design, fit *model.FitResult, draws Draws, breakEven float64, set Settings) (*DrawsResult, error) {
	set = set.withDefaults()
	if len(draws.Params) < 2 {
		return nil, fmt.Errorf("draws: %d successful draws; at least 2 are needed", len(draws.Params))
	}
	point := d.Summarize(fit.Params, set.ValuePerKPI)
	K := len(point)
	for i, p := range draws.Params {
		if len(p.Channels) != K || len(p.Fixed) != d.Spec.NumFixed() {
			return nil, fmt.Errorf("draws: draw %d has %d channels and %d fixed coefficients; the model has %d and %d",
				i, len(p.Channels), len(p.Fixed), K, d.Spec.NumFixed())
		}
	}
	roi := make([][]float64, len(draws.Params))
	mroi := make([][]float64, len(draws.Params))
	parallel(len(draws.Params), set.Workers, func(i int) {
		s := d.Summarize(draws.Params[i], set.ValuePerKPI)
		roi[i], mroi[i] = make([]float64, K), make([]float64, K)
		for k := range s {
			roi[i][k], mroi[i][k] = s[k].ROI, s[k].MROI
		}
	})
	r := &DrawsResult{N: len(draws.Params), Failed: draws.Failed, BreakEven: breakEven}
	for k, s := range point {
		r.Channels = append(r.Channels, s.Name)
		r.PointMROI = append(r.PointMROI, s.MROI)
		x := make([]float64, len(roi))
		flip := 0
		above := s.MROI > breakEven
		for i := range roi {
			x[i] = roi[i][k]
			if (mroi[i][k] > breakEven) != above || mroi[i][k] == breakEven {
				flip++
			}
		}
		m, v := meanOf(x), sd(x)
		cv := v / math.Abs(m)
		if v == 0 {
			cv = 0
		}
		r.ROIMean = append(r.ROIMean, m)
		r.ROISD = append(r.ROISD, v)
		r.ROICV = append(r.ROICV, cv)
		r.Flip = append(r.Flip, float64(flip)/float64(len(roi)))
	}
	return r, nil
}

// Checks grades the result, two checks per channel.
func (r *DrawsResult) Checks(th Thresholds) []Check {
	var out []Check
	defer func() {
		for i := range out {
			out[i].Basis = BasisPrecision
		}
	}()
	for k, name := range r.Channels {
		side := "above"
		if r.PointMROI[k] <= r.BreakEven {
			side = "at or below"
		}
		out = append(out,
			check("stability/roi_cv", Stability, name, th.ROICV.above(r.ROICV[k]), r.ROICV[k], th.ROICV.Fail,
				"ROI over %d draws: mean %.3g, SD %.3g; warn above %.2g", r.N, r.ROIMean[k], r.ROISD[k], th.ROICV.Warn),
			check("stability/break_even", Stability, name, th.BreakEvenFlip.above(r.Flip[k]), r.Flip[k], th.BreakEvenFlip.Fail,
				"marginal ROI %.3g (KPI value per currency) is %s break-even %.3g; %.0f%% of %d draws say otherwise; warn above %.0f%%",
				r.PointMROI[k], side, r.BreakEven, 100*r.Flip[k], r.N, 100*th.BreakEvenFlip.Warn),
		)
	}
	return out
}

// meanOf is the arithmetic mean (gonum/stat).
func meanOf(x []float64) float64 { return stat.Mean(x, nil) }
