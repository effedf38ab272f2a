package model

import "math"

// Lift is a lift test in the design's terms: channel index, the window of
// weeks [From, To] (inclusive), the measured incremental KPI inside the
// window and its standard error.
type Lift struct {
	Channel     int
	From, To    int
	Incremental float64
	StdError    float64 // > 0
}

// FitCalibrated fits y with the lift tests added to the objective:
//
//	Σ_t (y_t − ŷ_t)² + Σ_i (σ/se_i)² (incremental_i − LiftEffect_i)²,
//
// so each experiment counts as one more observation whose error is on the
// scale of a week's (σ is the residual SD of the uncalibrated fit, > 0): a
// precise experiment (small se) pulls hard, a vague one barely. It is the
// same variable-projection problem as Fit with one extra row per test, whose
// fixed columns are zero and whose media columns are the lift differences;
// the lift effect is linear in β, so the projection still holds.
// FitResult.SSE includes the lift rows; Fitted and Residuals are the weeks'.
// The lifts replace the design's own (Design.Lifts); sigma also weighs the
// priors (FitSettings.NoiseSD).
func (d *Design) FitCalibrated(y []float64, lifts []Lift, sigma float64, set FitSettings) (*FitResult, error) {
	if !(sigma > 0) || math.IsInf(sigma, 0) {
		panic("model: FitCalibrated: sigma must be positive and finite")
	}
	if _, err := d.WithLifts(lifts); err != nil {
		panic("model: FitCalibrated: " + err.Error())
	}
	rows := make([]int, d.N)
	for t := range rows {
		rows[t] = t
	}
	set.NoiseSD = sigma
	return fitExtended(d, y, rows, lifts, set)
}
