package validation

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"time"

	"sluice/internal/boundedio"
	"sluice/model"
)

// Forecast is what a decision promised: the KPI band expected over the
// weeks after the data under a spend plan, and the fitted model that made
// it, with what is needed to apply that model to later data. It is the
// forecast file read from --records, and the `forecast` section of a
// decision record has the same fields.
type Forecast struct {
	MadeWith map[string]string  `json:"made_with"` // content hashes of the inputs (data_sha256, spec_sha256, ...)
	Start    string             `json:"start"`     // first forecast week, YYYY-MM-DD
	Weeks    int                `json:"weeks"`
	Plan     map[string]float64 `json:"plan"` // planned weekly spend per channel
	Params   model.Params       `json:"params"`
	Model    ForecastModel      `json:"model"`
	Band     Band               `json:"band"`

	Source string `json:"-"` // file name, for messages
}

// ForecastModel is the structure and scale the forecast's parameters
// belong to (see model.Scale).
type ForecastModel struct {
	DataStart    string            `json:"data_start"` // first week of the fitted data
	DataWeeks    int               `json:"data_weeks"`
	Channels     []ForecastChannel `json:"channels"`      // in the order of params.channels
	FixedColumns []string          `json:"fixed_columns"` // in the order of params.fixed
	PeriodWeeks  float64           `json:"period_weeks"`
}

// ForecastChannel is one channel's transform kinds and scale.
type ForecastChannel struct {
	Name       string  `json:"name"`
	Adstock    string  `json:"adstock"`
	Saturation string  `json:"saturation"`
	MaxLag     int     `json:"max_lag,omitempty"`
	MeanSpend  float64 `json:"mean_spend"` // the unit of half_saturation
}

// Band is the forecast KPI per week: 5%, 50% and 95% quantiles.
type Band struct {
	P05 []float64 `json:"p05"`
	P50 []float64 `json:"p50"`
	P95 []float64 `json:"p95"`
}

// NewForecast records a forecast of weeks weeks after the design's data
// (which starts at origin) under plan, with the band the caller computed
// (from bootstrap draws).
func NewForecast(d *model.Design, origin time.Time, params model.Params, plan map[string]float64, band Band, madeWith map[string]string) *Forecast {
	h := len(band.P50)
	start := origin.AddDate(0, 0, 7*d.N)
	fc := &Forecast{MadeWith: madeWith, Start: start.Format(time.DateOnly), Weeks: h, Plan: plan,
		Params: params.Clone(), Band: band}
	fc.Model = ForecastModel{DataStart: origin.Format(time.DateOnly), DataWeeks: d.N,
		FixedColumns: d.Spec.FixedNames(), PeriodWeeks: d.Spec.Period}
	for k, c := range d.Spec.Channels {
		fc.Model.Channels = append(fc.Model.Channels, ForecastChannel{Name: c.Name, Adstock: c.Adstock,
			Saturation: c.Saturation, MaxLag: c.MaxLag, MeanSpend: d.MeanSpend[k]})
	}
	return fc
}

// LoadForecasts reads every *.json file of dir, in name order: forecast
// files and decision records. The companions that `sluice propose --out`
// and `sluice sign` write beside a record (brief.json, the manifest
// outputs.json, *.signatures.json)
// are not forecasts and are passed over, so dir may be a folder propose
// wrote; any other JSON file must be a forecast or a record.
func LoadForecasts(dir string) ([]*Forecast, error) {
	fi, err := os.Stat(dir)
	if err != nil {
		return nil, err
	}
	if !fi.IsDir() {
		return nil, fmt.Errorf("%s: not a directory: --records names the folder of earlier decisions (what propose --out wrote)", dir)
	}
	names, err := filepath.Glob(filepath.Join(dir, "*.json"))
	if err != nil {
		return nil, err
	}
	sort.Strings(names)
	var out []*Forecast
	for _, n := range names {
		if base := filepath.Base(n); base == "brief.json" || base == "outputs.json" || strings.HasSuffix(base, ".signatures.json") {
			continue
		}
		b, err := boundedio.ReadFile(n, boundedio.MaxInput)
		if err != nil {
			return nil, err
		}
		fc, err := ParseForecast(b, n)
		if err != nil {
			return nil, err
		}
		out = append(out, fc)
	}
	return out, nil
}

// ParseForecast reads a forecast from JSON: either the forecast object
// itself or a decision record holding it under "forecast". Unknown keys are
// refused; problems are reported as source:line:column or source: key path.
func ParseForecast(b []byte, source string) (*Forecast, error) {
	var probe map[string]json.RawMessage
	if err := json.Unmarshal(b, &probe); err != nil {
		return nil, jsonError(b, source, err)
	}
	body, prefix := b, ""
	if inner, ok := probe["forecast"]; ok {
		body, prefix = inner, "forecast."
	}
	dec := json.NewDecoder(bytes.NewReader(body))
	dec.DisallowUnknownFields()
	var fc Forecast
	if err := dec.Decode(&fc); err != nil {
		if prefix != "" {
			return nil, fmt.Errorf("%s: forecast: %v", source, err)
		}
		return nil, jsonError(b, source, err)
	}
	if dec.More() {
		return nil, fmt.Errorf("%s: more than one JSON value", source)
	}
	fc.Source = source
	if err := fc.check(prefix); err != nil {
		return nil, fmt.Errorf("%s: %w", source, err)
	}
	return &fc, nil
}

// jsonError locates a syntax or type error at line:column.
func jsonError(b []byte, source string, err error) error {
	var off int64 = -1
	var se *json.SyntaxError
	var te *json.UnmarshalTypeError
	switch {
	case errors.As(err, &se):
		off = se.Offset
	case errors.As(err, &te):
		off = te.Offset
	}
	if off < 0 || off > int64(len(b)) {
		return fmt.Errorf("%s: %v", source, err)
	}
	line := 1 + bytes.Count(b[:off], []byte("\n"))
	col := int(off) - bytes.LastIndexByte(b[:off], '\n')
	if te != nil && te.Field != "" {
		return fmt.Errorf("%s:%d:%d: %s: %s is not a valid %s", source, line, col, te.Field, te.Value, te.Type)
	}
	return fmt.Errorf("%s:%d:%d: %v", source, line, col, err)
}

func (fc *Forecast) check(p string) error {
	bad := func(field, format string, a ...any) error {
		return fmt.Errorf("%s%s: %s", p, field, fmt.Sprintf(format, a...))
	}
	date := func(field, v string) error {
		if _, err := time.Parse(time.DateOnly, v); err != nil || len(v) != 10 {
			return bad(field, "%q is not a date YYYY-MM-DD", v)
		}
		return nil
	}
	if err := date("start", fc.Start); err != nil {
		return err
	}
	m := fc.Model
	if err := date("model.data_start", m.DataStart); err != nil {
		return err
	}
	if fc.Weeks < 1 || fc.Weeks > 520 {
		return bad("weeks", "%d must be between 1 and 520", fc.Weeks)
	}
	for name, b := range map[string][]float64{"p05": fc.Band.P05, "p50": fc.Band.P50, "p95": fc.Band.P95} {
		if len(b) != fc.Weeks {
			return bad("band."+name, "has %d values; weeks is %d", len(b), fc.Weeks)
		}
		for i, v := range b {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return bad(fmt.Sprintf("band.%s[%d]", name, i), "is not finite")
			}
		}
	}
	for i := range fc.Weeks {
		if !(fc.Band.P05[i] <= fc.Band.P50[i] && fc.Band.P50[i] <= fc.Band.P95[i]) {
			return bad(fmt.Sprintf("band[%d]", i), "p05 %g, p50 %g, p95 %g are not in order", fc.Band.P05[i], fc.Band.P50[i], fc.Band.P95[i])
		}
	}
	if m.DataWeeks < 2 {
		return bad("model.data_weeks", "%d must be at least 2", m.DataWeeks)
	}
	if !(m.PeriodWeeks > 1) {
		return bad("model.period_weeks", "%g must exceed 1", m.PeriodWeeks)
	}
	if len(m.Channels) == 0 || len(m.Channels) != len(fc.Params.Channels) {
		return bad("model.channels", "%d channels for %d in params.channels", len(m.Channels), len(fc.Params.Channels))
	}
	if len(m.FixedColumns) != len(fc.Params.Fixed) {
		return bad("model.fixed_columns", "%d names for %d in params.fixed", len(m.FixedColumns), len(fc.Params.Fixed))
	}
	seen := map[string]bool{}
	for i, c := range m.Channels {
		f := fmt.Sprintf("model.channels[%d]", i)
		if c.Name == "" || seen[c.Name] {
			return bad(f+".name", "%q is empty or repeated", c.Name)
		}
		seen[c.Name] = true
		if !(c.MeanSpend > 0) || math.IsInf(c.MeanSpend, 0) {
			return bad(f+".mean_spend", "%g must be positive", c.MeanSpend)
		}
		w, ok := fc.Plan[c.Name]
		if !ok {
			return bad("plan", "has no weekly spend for channel %q", c.Name)
		}
		if !(w >= 0) || math.IsInf(w, 0) {
			return bad("plan."+c.Name, "%g must be a non-negative number", w)
		}
	}
	for name := range fc.Plan {
		if !seen[name] {
			return bad("plan."+name, "is not one of the forecast's channels")
		}
	}
	if _, err := fc.spec(); err != nil {
		return fmt.Errorf("%s%w", p, err)
	}
	return nil
}

// spec rebuilds the model structure of the forecast; the bounds are the
// defaults (they play no part in a prediction).
func (fc *Forecast) spec() (model.Spec, error) {
	var names, controls []string
	for _, c := range fc.Model.Channels {
		names = append(names, c.Name)
	}
	trend, harm := false, 0
	for i, f := range fc.Model.FixedColumns {
		switch {
		case i == 0:
			if f != "intercept" {
				return model.Spec{}, fmt.Errorf("model.fixed_columns[0]: %q must be intercept", f)
			}
		case f == "trend" && i == 1:
			trend = true
		case f == fmt.Sprintf("sin%d", harm+1):
			harm++
		case harm > 0 && f == fmt.Sprintf("cos%d", harm):
		default:
			controls = append(controls, f)
		}
	}
	spec := model.NewSpec(names, controls)
	spec.Trend, spec.Harm, spec.Period = trend, harm, fc.Model.PeriodWeeks
	for i, c := range fc.Model.Channels {
		spec.Channels[i].Adstock, spec.Channels[i].Saturation, spec.Channels[i].MaxLag = c.Adstock, c.Saturation, c.MaxLag
		if c.Adstock == model.AdstockDelayed && c.MaxLag == 0 {
			spec.Channels[i].MaxLag = model.DefaultMaxLag
		}
		if c.Adstock == model.AdstockDelayed {
			// Bounds play no part in a prediction; keep them valid.
			spec.Channels[i].Peak = model.Range{0, float64(spec.Channels[i].MaxLag - 1)}
		}
		if c.Saturation == model.SaturationHill {
			spec.Channels[i].Shape = model.DefaultShape
		}
	}
	if got := spec.FixedNames(); !slices.Equal(got, fc.Model.FixedColumns) {
		return model.Spec{}, fmt.Errorf("model.fixed_columns: %v are not intercept, [trend], sin/cos pairs, controls", fc.Model.FixedColumns)
	}
	return spec, spec.Validate("model")
}

// ReconcileResult compares a forecast with what happened.
type ReconcileResult struct {
	Source     string
	Start      string
	Weeks      int       // forecast weeks with data so far
	Actual     []float64 // KPI
	Reforecast []float64 // the stored model with the spend actually made
	Planned    []float64 // the stored model with the plan's spend
	Low, High  []float64 // the band, moved by Reforecast − Planned
	Coverage   float64   // share of weeks with Low ≤ actual ≤ High
	Bias       float64   // mean(actual − reforecast) / mean(actual)
	WMAPE      float64
	// SpendGap is the actual spend over the reconciled weeks relative to
	// the plan, all channels together (0 = as planned).
	SpendGap float64
}

// ErrNoWeeks is returned by Reconcile when the panel has no week of the
// forecast yet.
var ErrNoWeeks = errors.New("no forecast week is in the data yet")

// Reconcile re-forecasts the forecast's weeks with its stored parameters and
// the spend actually made, on panel p (which must hold the forecast's
// channels and controls, its weeks and the weeks before them that carry over
// into them), and compares with the actual KPI. The band is moved by the
// difference between that re-forecast and the forecast under the plan, so a
// plan that was not followed is not blamed on the model.
func Reconcile(p *model.Panel, fc *Forecast) (*ReconcileResult, error) {
	spec, err := fc.spec()
	if err != nil {
		return nil, fmt.Errorf("%s: %w", fc.Source, err)
	}
	start, _ := time.Parse(time.DateOnly, fc.Start)
	origin, _ := time.Parse(time.DateOnly, fc.Model.DataStart)
	s := slices.IndexFunc(p.Weeks, func(w time.Time) bool { return w.Equal(start) })
	if s < 0 {
		if p.NumWeeks() > 0 && start.After(p.Weeks[p.NumWeeks()-1]) {
			return nil, fmt.Errorf("%s: %w (forecast starts %s, data ends %s)", fc.Source, ErrNoWeeks, fc.Start,
				p.Weeks[p.NumWeeks()-1].Format(time.DateOnly))
		}
		return nil, fmt.Errorf("%s: start %s is not a week of %s", fc.Source, fc.Start, p.Source)
	}
	h := min(fc.Weeks, p.NumWeeks()-s)
	// The panel in the forecast's column order.
	q := &model.Panel{Source: p.Source, Weeks: p.Weeks, KPIName: p.KPIName, KPI: p.KPI}
	for _, c := range fc.Model.Channels {
		k := slices.Index(p.Channels, c.Name)
		if k < 0 {
			return nil, fmt.Errorf("%s: channel %q of the forecast is not in %s's channels %v", fc.Source, c.Name, p.Source, p.Channels)
		}
		q.Channels = append(q.Channels, c.Name)
		q.Spend = append(q.Spend, p.Spend[k])
	}
	for _, c := range spec.Controls {
		j := slices.Index(p.Controls, c)
		if j < 0 {
			return nil, fmt.Errorf("%s: control %q of the forecast is not among the controls of %s (%v)", fc.Source, c, p.Source, p.Controls)
		}
		q.Controls = append(q.Controls, c)
		q.Control = append(q.Control, p.Control[j])
	}
	sc := model.Scale{Origin: origin, Weeks: fc.Model.DataWeeks}
	for _, c := range fc.Model.Channels {
		sc.MeanSpend = append(sc.MeanSpend, c.MeanSpend)
	}
	d, err := model.NewDesignScaled(q, spec, sc)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", fc.Source, err)
	}
	actual := d.Predict(fc.Params)
	planned := *q
	planned.Spend = make([][]float64, len(q.Spend))
	var spent, plannedSpend float64
	for k, x := range q.Spend {
		y := slices.Clone(x)
		w := fc.Plan[q.Channels[k]]
		for t := s; t < s+h; t++ {
			spent += y[t]
			plannedSpend += w
			y[t] = w
		}
		planned.Spend[k] = y
	}
	dp, err := model.NewDesignScaled(&planned, spec, sc)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", fc.Source, err)
	}
	plan := dp.Predict(fc.Params)
	r := &ReconcileResult{Source: fc.Source, Start: fc.Start, Weeks: h}
	var covered int
	var se, sae, say float64
	for i := range h {
		t := s + i
		y := p.KPI[t]
		shift := actual[t] - plan[t]
		lo, hi := fc.Band.P05[i]+shift, fc.Band.P95[i]+shift
		r.Actual = append(r.Actual, y)
		r.Reforecast = append(r.Reforecast, actual[t])
		r.Planned = append(r.Planned, plan[t])
		r.Low, r.High = append(r.Low, lo), append(r.High, hi)
		if lo <= y && y <= hi {
			covered++
		}
		se += y - actual[t]
		sae += math.Abs(y - actual[t])
		say += math.Abs(y)
	}
	r.Coverage = float64(covered) / float64(h)
	r.Bias = se / say // mean error over mean |actual|
	r.WMAPE = sae / say
	if plannedSpend > 0 {
		r.SpendGap = spent/plannedSpend - 1
	}
	return r, nil
}

// Checks grades the result: coverage of the band and bias.
func (r *ReconcileResult) Checks(th Thresholds) (out []Check) {
	name := filepath.Base(r.Source)
	b := math.Abs(r.Bias)
	covered := int(math.Round(r.Coverage * float64(r.Weeks)))
	defer func() {
		// A right model's 5%–95% band covers each week with probability 0.9;
		// the weeks are taken as independent (the band already holds the
		// parameter uncertainty and the noise).
		out[0].PValue, out[0].Null = ptr(binomialAtMost(covered, r.Weeks, 0.9)), "binomial"
	}()
	return []Check{
		check("reconciliation/coverage", Reconciliation, Global, th.Coverage.below(r.Coverage), r.Coverage, th.Coverage.Fail,
			"%s: %d of %d weeks from %s inside the 5%%–95%% band (moved to the spend made, %+.0f%% against plan); warn below %.0f%%",
			name, int(math.Round(r.Coverage*float64(r.Weeks))), r.Weeks, r.Start, 100*r.SpendGap, 100*th.Coverage.Warn),
		check("reconciliation/bias", Reconciliation, Global, th.ReconcileBias.above(b), b, th.ReconcileBias.Fail,
			"%s: actual KPI %s the re-forecast by %.1f%% on average (wMAPE %.1f%%); warn above %.0f%%",
			name, aboveBelow(r.Bias), 100*b, 100*r.WMAPE, 100*th.ReconcileBias.Warn),
	}
}

func aboveBelow(v float64) string {
	if v >= 0 {
		return "above"
	}
	return "below"
}

// WriteForecast writes fc as indented JSON.
func WriteForecast(w io.Writer, fc *Forecast) error {
	b, err := json.MarshalIndent(fc, "", "  ")
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}
