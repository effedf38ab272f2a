package validation

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"sluice/internal/lsq"
	"sluice/model"
)

// Metrics are point-forecast accuracy measures over h test points, with
// e = actual − forecast (Hyndman & Koehler 2006, "Another look at measures
// of forecast accuracy"; wMAPE is the MAD/mean ratio).
type Metrics struct {
	N     int     `json:"n"`
	ME    float64 `json:"me"`    // mean(e): bias, positive when the forecast is low
	RMSE  float64 `json:"rmse"`  // sqrt(mean(e²))
	MAE   float64 `json:"mae"`   // mean(|e|)
	MPE   float64 `json:"mpe"`   // mean(100 e/y), percent; NaN if some y = 0
	MAPE  float64 `json:"mape"`  // mean(|100 e/y|), percent; NaN if some y = 0
	WMAPE float64 `json:"wmape"` // Σ|e| / Σ|y|, a fraction
	// MASE = MAE / Q, Q = mean over the training series of |Y_i − Y_{i−m}|
	// (the in-sample MAE of the naive forecast with lag m); NaN when the
	// training series is not longer than m.
	MASE      float64 `json:"mase"`
	MASEScale float64 `json:"mase_scale"` // Q
	SeasonLag int     `json:"season_lag"` // m
}

// Measure computes the metrics of forecast against actual; train is the
// in-sample series that scales MASE with lag m (1 for the naive forecast, the
// season length for the seasonal naive).
func Measure(actual, forecast, train []float64, m int) Metrics {
	if len(actual) != len(forecast) {
		panic("validation: Measure: actual and forecast differ in length")
	}
	if m < 1 {
		panic("validation: Measure: lag must be at least 1")
	}
	h := float64(len(actual))
	var me, sse, sae, mpe, mape, say float64
	for i, y := range actual {
		e := y - forecast[i]
		me += e
		sse += e * e
		sae += math.Abs(e)
		say += math.Abs(y)
		if y == 0 {
			mpe, mape = math.NaN(), math.NaN()
		} else {
			mpe += 100 * e / y
			mape += math.Abs(100 * e / y)
		}
	}
	out := Metrics{N: len(actual), ME: me / h, RMSE: math.Sqrt(sse / h), MAE: sae / h,
		MPE: mpe / h, MAPE: mape / h, WMAPE: sae / say, SeasonLag: m, MASE: math.NaN(), MASEScale: math.NaN()}
	if len(train) > m {
		var q float64
		for i := m; i < len(train); i++ {
			q += math.Abs(train[i] - train[i-m])
		}
		out.MASEScale = q / float64(len(train)-m)
		out.MASE = out.MAE / out.MASEScale
	}
	return out
}

// SeasonLag is the MASE lag for a weekly training window of n weeks: the
// seasonal naive (52) once the window holds two years, so that every week has
// a year-ago value to compare with, else the naive (1).
func SeasonLag(n int) int {
	if n >= 104 {
		return 52
	}
	return 1
}

// Fold is one origin of the rolling-origin backtest.
type Fold struct {
	Origin int     `json:"origin"` // first forecast week (index); the fit uses the weeks before
	Weeks  int     `json:"weeks"`
	WMAPE  float64 `json:"wmape"`
}

// BacktestResult is the holdout and backtest of a model.
type BacktestResult struct {
	TrainWeeks, TestWeeks int
	Model                 Metrics // the media model fitted on the training weeks
	Baseline              Metrics // intercept, trend, season and controls only (OLS)
	Skill                 float64 // 1 − WMAPE(model)/WMAPE(baseline)
	Forecast, Actual      []float64
	Folds                 []Fold
	// Short is set when the holdout cannot be judged: the model needs
	// MinTrain weeks to be fitted and HoldoutWeeks to be tested, and fixed
	// columns that are not linearly dependent on the training weeks (a
	// control that only starts later is constant there); Reason says which.
	Short    bool
	MinTrain int
	Reason   string
}

// Backtest fits the model without the last HoldoutWeeks weeks, forecasts
// them with the spend actually made (Design.Head keeps the full design's
// scaling, so the training fit predicts the full design), and measures the
// forecast; the same for a baseline without media. It then runs a
// rolling-origin backtest with an expanding window: Folds origins
// FoldWeeks apart ending FoldWeeks before the end, each fitted afresh on the
// weeks before it and tested on the FoldWeeks after.
func Backtest(d *model.Design, y []float64, set Settings) (*BacktestResult, error) {
	return backtest(d, y, set, nil)
}

// backtest is Backtest; with warm, every fit starts from it alone (as the
// simulated panels' fits do, so the two are compared like with like).
func backtest(d *model.Design, y []float64, set Settings, warm *model.Params) (*BacktestResult, error) {
	set = set.withDefaults()
	fitHead := func(d *model.Design, y []float64, n int, set Settings) (*model.FitResult, error) {
		if warm != nil {
			return d.Head(n).Fit(y[:n], model.FitSettings{Seed: set.Seed, Warm: warm})
		}
		return fitHead(d, y, n, set)
	}
	h := set.HoldoutWeeks
	r := &BacktestResult{TestWeeks: h, MinTrain: minTrain(d)}
	nTrain := d.N - h
	if nTrain < r.MinTrain {
		r.Short = true
		r.Reason = fmt.Sprintf("a holdout of %d weeks needs at least %d weeks before it to fit the model", h, r.MinTrain)
		return r, nil
	}
	r.TrainWeeks = nTrain
	if err := fixedIndependent(d, nTrain); err != nil {
		r.Short, r.Reason = true, err.Error()
		return r, nil
	}
	fit, err := fitHead(d, y, nTrain, set)
	if err != nil {
		return nil, fmt.Errorf("holdout fit on the first %d weeks: %w", nTrain, err)
	}
	full := d.Predict(fit.Params)
	r.Forecast = full[nTrain:]
	r.Actual = y[nTrain:]
	m := SeasonLag(nTrain)
	r.Model = Measure(r.Actual, r.Forecast, y[:nTrain], m)
	base, err := baselineForecast(d, y, nTrain)
	if err != nil {
		return nil, err
	}
	r.Baseline = Measure(r.Actual, base[nTrain:], y[:nTrain], m)
	r.Skill = 1 - r.Model.WMAPE/r.Baseline.WMAPE
	for i := range set.Folds {
		origin := d.N - (set.Folds-i)*set.FoldWeeks
		if origin < r.MinTrain || fixedIndependent(d, origin) != nil {
			continue
		}
		var pred []float64
		if origin == nTrain {
			pred = full
		} else {
			f, err := fitHead(d, y, origin, set)
			if err != nil {
				return nil, fmt.Errorf("backtest fit on the first %d weeks: %w", origin, err)
			}
			pred = d.Predict(f.Params)
		}
		end := min(origin+set.FoldWeeks, d.N)
		mf := Measure(y[origin:end], pred[origin:end], y[:origin], SeasonLag(origin))
		r.Folds = append(r.Folds, Fold{Origin: origin, Weeks: end - origin, WMAPE: mf.WMAPE})
		set.progress("backtest", i+1, set.Folds)
	}
	return r, nil
}

// nullAccuracy adds the accuracy metrics of panel y to nv: the holdout's
// and every backtest fold's, each fitted warm from p (the parameters the
// panel was simulated from, refitted on it), with the same weeks, origins
// and formulas as Backtest.
func nullAccuracy(d *model.Design, y []float64, p model.Params, set Settings, nv *nullValues) {
	h := set.HoldoutWeeks
	nTrain := d.N - h
	if nTrain < minTrain(d) || fixedIndependent(d, nTrain) != nil {
		return
	}
	warm := model.FitSettings{Seed: set.Seed, Warm: &p}
	head := func(n int) []float64 {
		f, err := d.Head(n).Fit(y[:n], warm)
		if err != nil {
			return nil
		}
		return d.Predict(f.Params)
	}
	full := head(nTrain)
	if full == nil {
		return
	}
	m := Measure(y[nTrain:], full[nTrain:], y[:nTrain], SeasonLag(nTrain))
	base, err := baselineForecast(d, y, nTrain)
	if err != nil {
		return
	}
	bm := Measure(y[nTrain:], base[nTrain:], y[:nTrain], SeasonLag(nTrain))
	nv.add("accuracy/holdout_wmape/"+Global, m.WMAPE)
	nv.add("accuracy/holdout_mase/"+Global, m.MASE)
	nv.add("accuracy/holdout_bias/"+Global, math.Abs(m.ME)/meanAbs(y[nTrain:]))
	nv.add("accuracy/skill/"+Global, 1-m.WMAPE/bm.WMAPE)
	var w []float64
	for i := range set.Folds {
		origin := d.N - (set.Folds-i)*set.FoldWeeks
		if origin < minTrain(d) || fixedIndependent(d, origin) != nil {
			continue
		}
		pred := full
		if origin != nTrain {
			if pred = head(origin); pred == nil {
				return
			}
		}
		end := min(origin+set.FoldWeeks, d.N)
		w = append(w, Measure(y[origin:end], pred[origin:end], y[:origin], SeasonLag(origin)).WMAPE)
	}
	if len(w) >= 2 {
		nv.add("accuracy/backtest_median_wmape/"+Global, median(w))
		nv.add("accuracy/backtest_worst_wmape/"+Global, slices.Max(w))
	}
}

// minTrain is the fewest weeks a fit needs: as many as NewDesign asks of a
// panel (parameters + 10).
func minTrain(d *model.Design) int { return d.Spec.NumParams() + 10 }

func fitHead(d *model.Design, y []float64, n int, set Settings) (*model.FitResult, error) {
	return d.Head(n).Fit(y[:n], model.FitSettings{Seed: set.Seed, Workers: set.Workers})
}

// fixedIndependent reports an error when the fixed columns are linearly
// dependent on the first n weeks (the test varpro applies), which a fit
// there could not get past.
func fixedIndependent(d *model.Design, n int) error {
	_, p := d.Fixed.Dims()
	if i := lsq.DependentColumn(d.Fixed.Slice(0, n, 0, p)); i >= 0 {
		return fmt.Errorf("the fixed column %q is a combination of the others on the first %d weeks (a control constant there?)", d.Spec.FixedNames()[i], n)
	}
	return nil
}

// baselineForecast fits the fixed columns alone (intercept, trend, season,
// controls) by least squares on the first n weeks and predicts every week.
func baselineForecast(d *model.Design, y []float64, n int) ([]float64, error) {
	_, p := d.Fixed.Dims()
	x := d.Fixed.Slice(0, n, 0, p)
	var qr mat.QR
	qr.Factorize(x)
	var beta mat.VecDense
	if err := qr.SolveVecTo(&beta, false, mat.NewVecDense(n, slices.Clone(y[:n]))); err != nil {
		return nil, fmt.Errorf("baseline fit: %w", err)
	}
	var pred mat.VecDense
	pred.MulVec(d.Fixed, &beta)
	return slices.Clone(pred.RawVector().Data), nil
}

// Checks grades the result.
func (r *BacktestResult) Checks(th Thresholds) []Check {
	if r.Short {
		c := Check{Name: "accuracy/holdout_wmape", Family: Accuracy, Scope: Global, Status: Warn,
			Threshold: th.HoldoutWMAPE.Fail,
			Detail:    "not judged: " + r.Reason}
		return []Check{c}
	}
	m := r.Model
	mean := meanAbs(r.Actual)
	bias := math.Abs(m.ME) / mean
	var out []Check
	out = append(out,
		check("accuracy/holdout_wmape", Accuracy, Global, th.HoldoutWMAPE.above(m.WMAPE), m.WMAPE, th.HoldoutWMAPE.Fail,
			"last %d weeks forecast from a fit on the first %d with the spend made: wMAPE %.1f%% (MAPE %s, RMSE %.4g, ME %.4g); warn above %.0f%%",
			r.TestWeeks, r.TrainWeeks, 100*m.WMAPE, pct(m.MAPE), m.RMSE, m.ME, 100*th.HoldoutWMAPE.Warn),
		check("accuracy/holdout_mase", Accuracy, Global, th.HoldoutMASE.above(m.MASE), m.MASE, th.HoldoutMASE.Fail,
			"holdout MAE %.4g over the in-sample MAE %.4g of the %s forecast; warn above %.2g",
			m.MAE, m.MASEScale, naiveName(m.SeasonLag), th.HoldoutMASE.Warn),
		check("accuracy/holdout_bias", Accuracy, Global, th.HoldoutBias.above(bias), bias, th.HoldoutBias.Fail,
			"mean error %.4g is %.1f%% of the mean KPI (forecast %s); warn above %.0f%%",
			m.ME, 100*bias, lowHigh(m.ME), 100*th.HoldoutBias.Warn),
		check("accuracy/skill", Accuracy, Global, th.Skill.below(r.Skill), r.Skill, th.Skill.Fail,
			"1 − wMAPE %.1f%% / %.1f%% of the baseline without media (trend, season, controls); warn below %.2g",
			100*m.WMAPE, 100*r.Baseline.WMAPE, th.Skill.Warn),
	)
	if len(r.Folds) < 2 {
		out = append(out, Check{Name: "accuracy/backtest_median_wmape", Family: Accuracy, Scope: Global, Status: Warn,
			Threshold: th.BacktestMedian.Fail,
			Detail:    fmt.Sprintf("not judged: only %d backtest origin(s) leave at least %d weeks to fit", len(r.Folds), r.MinTrain)})
		return out
	}
	w := make([]float64, len(r.Folds))
	for i, f := range r.Folds {
		w[i] = f.WMAPE
	}
	med := median(w)
	worst := slices.Max(w)
	out = append(out,
		check("accuracy/backtest_median_wmape", Accuracy, Global, th.BacktestMedian.above(med), med, th.BacktestMedian.Fail,
			"median wMAPE %.1f%% over %d expanding-window folds of %d weeks; warn above %.0f%%",
			100*med, len(r.Folds), r.Folds[0].Weeks, 100*th.BacktestMedian.Warn),
		check("accuracy/backtest_worst_wmape", Accuracy, Global, th.BacktestWorst.above(worst), worst, th.BacktestWorst.Fail,
			"worst fold wMAPE %.1f%% (folds %s); warn above %.0f%%", 100*worst, foldList(w), 100*th.BacktestWorst.Warn),
	)
	return out
}

func naiveName(m int) string {
	if m == 1 {
		return "naive"
	}
	return fmt.Sprintf("seasonal naive (lag %d)", m)
}

func lowHigh(me float64) string {
	if me >= 0 {
		return "low"
	}
	return "high"
}

func pct(v float64) string {
	if math.IsNaN(v) {
		return "undefined"
	}
	return fmt.Sprintf("%.1f%%", v)
}

func foldList(w []float64) string {
	s := ""
	for i, v := range w {
		if i > 0 {
			s += ", "
		}
		s += fmt.Sprintf("%.1f%%", 100*v)
	}
	return s
}

func meanAbs(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += math.Abs(v)
	}
	return s / float64(len(x))
}
