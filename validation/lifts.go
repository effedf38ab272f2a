package validation

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"

	"sluice/internal/boundedio"
	"sluice/model"
)

// LiftTest is one experiment: the KPI that a channel's spend inside a
// window of weeks caused, as measured by the experiment, with its standard
// error.
type LiftTest struct {
	Channel     string
	Start, End  time.Time // inclusive dates as written
	Incremental float64   // KPI units
	StdError    float64   // > 0
	Source      string    // file name
	Line        int       // line of the row in the file

	// The test in the panel's terms: channel index and the weeks (indices)
	// whose first day to last day overlap [Start, End].
	ChannelIndex int
	From, To     int
}

// LiftColumns are the columns of a lift-test file, in any order.
var LiftColumns = []string{"channel", "start", "end", "incremental", "std_error"}

// LoadLifts reads the lift-test CSV file at path (see ReadLifts).
func LoadLifts(path string, p *model.Panel) ([]LiftTest, error) {
	f, err := boundedio.Open(path, boundedio.MaxInput)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadLifts(f, path, p)
}

// ReadLifts reads lift tests from CSV with the header
// channel,start,end,incremental,std_error (columns in any order, no
// others): one row per experiment, dates YYYY-MM-DD inclusive and inside the
// panel's weeks, channel one of the panel's, incremental a finite number in
// KPI units, std_error positive. A problem is returned as a
// *model.DataError at the offending cell (file:line:column).
func ReadLifts(r io.Reader, source string, p *model.Panel) ([]LiftTest, error) {
	if source == "" {
		source = "<input>"
	}
	if p.NumWeeks() == 0 {
		panic("validation: ReadLifts: empty panel")
	}
	errAt := func(line, col int, hint, format string, a ...any) error {
		return &model.DataError{File: source, Line: line, Column: col, Msg: fmt.Sprintf(format, a...), Hint: hint}
	}
	br := bufio.NewReader(r)
	if b, err := br.Peek(3); err == nil && bytes.Equal(b, []byte("\xef\xbb\xbf")) {
		br.Discard(3)
	}
	cr := csv.NewReader(br)
	cr.ReuseRecord = false
	syntax := func(err error) error {
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			return errAt(pe.Line, pe.Column, "", "%s", pe.Err)
		}
		return fmt.Errorf("%s: %w", source, err)
	}
	header, err := cr.Read()
	if err == io.EOF {
		return nil, errAt(0, 0, "the first row names the columns: "+strings.Join(LiftColumns, ","), "the file is empty")
	}
	if err != nil {
		return nil, syntax(err)
	}
	idx := map[string]int{}
	for i, h := range header {
		name := strings.ToLower(strings.TrimSpace(h))
		line, col := cr.FieldPos(i)
		if !slices.Contains(LiftColumns, name) {
			return nil, errAt(line, col, "the columns are "+strings.Join(LiftColumns, ","), "unknown column %q", h)
		}
		if _, dup := idx[name]; dup {
			return nil, errAt(line, col, "", "column %q appears twice", h)
		}
		idx[name] = i
	}
	for _, name := range LiftColumns {
		if _, ok := idx[name]; !ok {
			line, _ := cr.FieldPos(0)
			return nil, errAt(line, 0, "the columns are "+strings.Join(LiftColumns, ","), "missing column %q", name)
		}
	}
	first := p.Weeks[0]
	last := p.Weeks[p.NumWeeks()-1].AddDate(0, 0, 6)
	var out []LiftTest
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, syntax(err)
		}
		cell := func(name string) (string, int, int) {
			i := idx[name]
			line, col := cr.FieldPos(i)
			return strings.TrimSpace(rec[i]), line, col
		}
		var lt LiftTest
		lt.Source = source
		v, line, col := cell("channel")
		lt.Line = line
		lt.ChannelIndex = slices.Index(p.Channels, v)
		if lt.ChannelIndex < 0 {
			return nil, errAt(line, col, "the channels are "+strings.Join(p.Channels, ", "), "channel %q is not one of the model's channels", v)
		}
		lt.Channel = v
		date := func(name string) (time.Time, error) {
			v, line, col := cell(name)
			d, err := time.Parse(time.DateOnly, v)
			if err != nil || len(v) != 10 {
				return time.Time{}, errAt(line, col, "dates are YYYY-MM-DD, e.g. 2024-03-04", "%s %q is not a date", name, v)
			}
			if d.Before(first) || d.After(last) {
				return time.Time{}, errAt(line, col, "", "%s %s is outside the panel's weeks %s to %s",
					name, v, first.Format(time.DateOnly), last.Format(time.DateOnly))
			}
			return d, nil
		}
		if lt.Start, err = date("start"); err != nil {
			return nil, err
		}
		if lt.End, err = date("end"); err != nil {
			return nil, err
		}
		if lt.End.Before(lt.Start) {
			_, line, col := cell("end")
			return nil, errAt(line, col, "", "end %s is before start %s", lt.End.Format(time.DateOnly), lt.Start.Format(time.DateOnly))
		}
		lt.From, lt.To = weekOf(p, lt.Start), weekOf(p, lt.End)
		number := func(name string) (float64, error) {
			v, line, col := cell(name)
			x, ok := parseDecimal(v)
			if !ok {
				return 0, errAt(line, col, "write a plain decimal number, e.g. 12500.5", "%s %q is not a number", name, v)
			}
			return x, nil
		}
		if lt.Incremental, err = number("incremental"); err != nil {
			return nil, err
		}
		if lt.StdError, err = number("std_error"); err != nil {
			return nil, err
		}
		if !(lt.StdError > 0) {
			_, line, col := cell("std_error")
			return nil, errAt(line, col, "the standard error of the measured incremental KPI, as the experiment reports it",
				"std_error %g must be positive", lt.StdError)
		}
		var spent float64
		for t := lt.From; t <= lt.To; t++ {
			spent += p.Spend[lt.ChannelIndex][t]
		}
		if !(spent > 0) {
			// The model's effect of the window is zero with zero
			// uncertainty: comparing a measured lift with it would test
			// nothing and a calibrated fit would be forced through it.
			_, line, col := cell("start")
			return nil, errAt(line, col, "a lift test measures the KPI the channel's spend in its window adds; check the window's dates against the panel's spend column",
				"%s spent nothing in the panel from %s to %s, the test's window", lt.Channel, lt.Start.Format(time.DateOnly), lt.End.Format(time.DateOnly))
		}
		out = append(out, lt)
	}
	if len(out) == 0 {
		return nil, errAt(0, 0, "one row per experiment: channel,start,end,incremental,std_error", "the file has no lift tests")
	}
	return out, nil
}

// weekOf is the index of the panel week holding date (each week runs for
// seven days from its first day). date must lie inside the panel.
func weekOf(p *model.Panel, date time.Time) int {
	i, found := slices.BinarySearchFunc(p.Weeks, date, func(w, d time.Time) int { return w.Compare(d) })
	if found {
		return i
	}
	return i - 1
}

// parseDecimal accepts an optional sign, digits with an optional fraction,
// and an optional exponent; not hexadecimal, underscores, NaN or infinities.
func parseDecimal(s string) (float64, bool) {
	if s == "" {
		return 0, false
	}
	for _, c := range s {
		if !strings.ContainsRune("0123456789+-.eE", c) {
			return 0, false
		}
	}
	x, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(x, 0) || math.IsNaN(x) {
		return 0, false
	}
	return x, true
}

// LiftResult is the agreement of the model with the lift tests.
type LiftResult struct {
	Tests []LiftTest
	// Per test: the model's estimate of the same quantity (Design.LiftEffect),
	// its SD over the draws (0 without draws), and
	// z = (model − measured) / √(se² + model_se²).
	Model, ModelSE, Z []float64
	Draws             int // number of draws model_se comes from

	// Calibrated is set when the fit had the lift tests in its likelihood
	// (the design's lifts, from --lifts). Its agreement with them is then
	// partly by construction, so the check grades the agreement of a refit
	// without them (Uncalibrated, UncalibratedZ, with the same model SD):
	// whether the weekly data alone agree with the experiments.
	Calibrated                  bool
	Uncalibrated, UncalibratedZ []float64
	// ROIMoves is, per channel, the ROI (KPI per currency unit) of the
	// refit without the lifts and of the calibrated fit: how far the lift
	// tests moved each channel. Empty when not Calibrated.
	ROIMoves []ROIMove
}

// ROIMove is one channel's ROI without and with the lift tests in the fit.
type ROIMove struct {
	Channel                  string
	Uncalibrated, Calibrated float64
}

// CompareLifts computes the model's estimate of every lift test under the
// fit and, when draws are given, their spread over the draws.
func CompareLifts(d *model.Design, fit *model.FitResult, lifts []LiftTest, draws *Draws) *LiftResult {
	r := &LiftResult{Tests: lifts}
	if draws != nil {
		r.Draws = len(draws.Params)
	}
	for _, lt := range lifts {
		k := lt.ChannelIndex
		m := d.LiftEffect(k, fit.Params.Channels[k], lt.From, lt.To)
		var se float64
		if r.Draws >= 2 {
			x := make([]float64, r.Draws)
			for i, p := range draws.Params {
				x[i] = d.LiftEffect(k, p.Channels[k], lt.From, lt.To)
			}
			se = sd(x)
		}
		r.Model = append(r.Model, m)
		r.ModelSE = append(r.ModelSE, se)
		r.Z = append(r.Z, (m-lt.Incremental)/math.Sqrt(lt.StdError*lt.StdError+se*se))
	}
	if len(d.Lifts) > 0 && len(fit.Residuals) == d.N {
		r.uncalibrated(d, fit, lifts)
	}
	return r
}

// uncalibrated refits the KPI (the fit's fitted values plus residuals)
// without the design's lift tests, from the calibrated fit and the spec's
// starts (seed 1), with the same priors and noise SD, and records the
// refit's estimate of every test and each channel's ROI either way. If the
// refit fails, the result stays as if not calibrated: the check then
// grades the calibrated fit and says so.
func (r *LiftResult) uncalibrated(d *model.Design, fit *model.FitResult, lifts []LiftTest) {
	y := make([]float64, d.N)
	for t := range y {
		y[t] = fit.Fitted[t] + fit.Residuals[t]
	}
	plain, err := d.WithLifts(nil)
	if err != nil {
		return
	}
	warm := fit.Params.Clone()
	ref, err := plain.Fit(y, model.FitSettings{Seed: 1, Starts: d.Spec.Starts, Warm: &warm, Priors: fit.Priors,
		NoiseSD: fit.NoiseSD, NoPriors: fit.Priors == nil})
	if err != nil {
		return
	}
	r.Calibrated = true
	for i, lt := range lifts {
		k := lt.ChannelIndex
		m := d.LiftEffect(k, ref.Params.Channels[k], lt.From, lt.To)
		se := r.ModelSE[i]
		r.Uncalibrated = append(r.Uncalibrated, m)
		r.UncalibratedZ = append(r.UncalibratedZ, (m-lt.Incremental)/math.Sqrt(lt.StdError*lt.StdError+se*se))
	}
	a, b := plain.Summarize(ref.Params, 1), d.Summarize(fit.Params, 1)
	for k := range a {
		r.ROIMoves = append(r.ROIMoves, ROIMove{Channel: a[k].Name, Uncalibrated: a[k].ROI, Calibrated: b[k].ROI})
	}
}

// Checks grades the result, one check per lift test, scoped to its channel.
func (r *LiftResult) Checks(th Thresholds) []Check {
	var out []Check
	for i, lt := range r.Tests {
		z := math.Abs(r.Z[i])
		unc := "the model's own uncertainty not counted (no draws)"
		if r.Draws >= 2 {
			unc = fmt.Sprintf("model SD %.4g over %d draws", r.ModelSE[i], r.Draws)
		}
		if r.Calibrated {
			// Graded on the refit without the lifts: the calibrated fit
			// agrees with them partly because it was made to.
			zu := math.Abs(r.UncalibratedZ[i])
			out = append(out, check("lift/agreement", Lift, lt.Channel, th.LiftZ.above(zu), zu, th.LiftZ.Fail,
				"%s:%d, %s to %s (%d weeks): measured %.4g ± %.4g; fit without the lift tests %.4g (z %+.2f), with them %.4g (z %+.2f) (%s); graded on the fit without them; warn above %.2g",
				lt.Source, lt.Line, lt.Start.Format(time.DateOnly), lt.End.Format(time.DateOnly), lt.To-lt.From+1,
				lt.Incremental, lt.StdError, r.Uncalibrated[i], r.UncalibratedZ[i], r.Model[i], r.Z[i], unc, th.LiftZ.Warn))
			continue
		}
		out = append(out, check("lift/agreement", Lift, lt.Channel, th.LiftZ.above(z), z, th.LiftZ.Fail,
			"%s:%d, %s to %s (%d weeks): measured %.4g ± %.4g, model %.4g (%s): z %+.2f; warn above %.2g",
			lt.Source, lt.Line, lt.Start.Format(time.DateOnly), lt.End.Format(time.DateOnly), lt.To-lt.From+1,
			lt.Incremental, lt.StdError, r.Model[i], unc, r.Z[i], th.LiftZ.Warn))
	}
	return out
}

// CalibrationResult compares the fit with a refit that has the lift tests
// in its objective (Design.FitCalibrated).
type CalibrationResult struct {
	Channels          []string
	Sigma             float64   // the scale of the lift rows' weights (residual SD)
	Before, After     []float64 // ROI per channel
	LiftBefore        []float64 // per test, the model's estimate before and after
	LiftAfter         []float64
	Fit               *model.FitResult // the calibrated fit
	InSampleR2, R2Cal float64
}

// Calibrate refits the model with the lift tests added to the objective,
// each weighted by the fit's residual SD over its standard error, starting
// from the fit and the usual random starts.
//
// When the design already carries the lift tests (--lifts puts them into
// every fit), fit is the calibrated fit; the comparison is then with a
// refit without them, so Before is still "the data alone" and After "with
// the experiments".
func Calibrate(d *model.Design, y []float64, fit *model.FitResult, lifts []LiftTest, set Settings) (*CalibrationResult, error) {
	set = set.withDefaults()
	if len(d.Lifts) > 0 {
		plain, err := d.WithLifts(nil)
		if err != nil {
			return nil, err
		}
		warm := fit.Params.Clone()
		unc, err := plain.Fit(y, model.FitSettings{Seed: set.Seed, Workers: set.Workers, Starts: d.Spec.Starts, Warm: &warm,
			Priors: fit.Priors, NoiseSD: fit.NoiseSD, NoPriors: fit.Priors == nil})
		if err != nil {
			return nil, fmt.Errorf("refit without the lift tests: %w", err)
		}
		return compareCalibration(plain, y, unc, fit, lifts, fit.NoiseSD, set), nil
	}
	st := model.FitStats(y, fit.Residuals, d.Spec.NumParams())
	if !(st.Sigma > 0) {
		return nil, errors.New("calibration: the fit leaves no residual variation to weight the lift tests against")
	}
	var rows []model.Lift
	for _, lt := range lifts {
		rows = append(rows, model.Lift{Channel: lt.ChannelIndex, From: lt.From, To: lt.To, Incremental: lt.Incremental, StdError: lt.StdError})
	}
	cal, err := d.FitCalibrated(y, rows, st.Sigma, model.FitSettings{Seed: set.Seed, Workers: set.Workers,
		Starts: d.Spec.Starts, Warm: &fit.Params})
	if err != nil {
		return nil, fmt.Errorf("calibrated fit: %w", err)
	}
	return compareCalibration(d, y, fit, cal, lifts, st.Sigma, set), nil
}

// compareCalibration fills a CalibrationResult from an uncalibrated fit and
// a calibrated one.
func compareCalibration(d *model.Design, y []float64, fit, cal *model.FitResult, lifts []LiftTest, sigma float64, set Settings) *CalibrationResult {
	r := &CalibrationResult{Sigma: sigma, Fit: cal, InSampleR2: model.FitStats(y, fit.Residuals, d.Spec.NumParams()).R2,
		R2Cal: model.FitStats(y, cal.Residuals, d.Spec.NumParams()).R2}
	before, after := d.Summarize(fit.Params, set.ValuePerKPI), d.Summarize(cal.Params, set.ValuePerKPI)
	for k := range before {
		r.Channels = append(r.Channels, before[k].Name)
		r.Before = append(r.Before, before[k].ROI)
		r.After = append(r.After, after[k].ROI)
	}
	for _, lt := range lifts {
		k := lt.ChannelIndex
		r.LiftBefore = append(r.LiftBefore, d.LiftEffect(k, fit.Params.Channels[k], lt.From, lt.To))
		r.LiftAfter = append(r.LiftAfter, d.LiftEffect(k, cal.Params.Channels[k], lt.From, lt.To))
	}
	return r
}
