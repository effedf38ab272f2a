package validation

import (
	"fmt"
	"math"
	"reflect"
	"sort"
	"strings"
)

// Limit is a pair of thresholds on one metric: crossing Warn gives a
// warning, crossing Fail a failure. Whether "crossing" means going above or
// below depends on the metric (see each field of Thresholds). A check
// reports Fail as its threshold.
type Limit struct {
	Warn float64 `json:"warn" yaml:"warn"`
	Fail float64 `json:"fail" yaml:"fail"`
}

// above grades a metric where larger is worse. NaN fails.
func (l Limit) above(v float64) Status {
	switch {
	case math.IsNaN(v) || v > l.Fail:
		return Fail
	case v > l.Warn:
		return Warn
	}
	return Pass
}

// below grades a metric where smaller is worse. NaN fails.
func (l Limit) below(v float64) Status {
	switch {
	case math.IsNaN(v) || v < l.Fail:
		return Fail
	case v < l.Warn:
		return Warn
	}
	return Pass
}

// Thresholds are the raw limits on each check's metric. A check that tests
// the model (holdout and backtest errors, quarter-out, decay bounds, drift,
// lift agreement, forecast coverage) is graded by its p-value against its
// family's false-alarm rate instead (rates.go, Grade), unless its raw limit
// is Set here (a command-line override) or by the policy (raw_limit): then
// the raw limit grades it and the check says so (RawThreshold). The other
// checks (skill, the precision measures, reconciliation bias) are always
// graded by their raw limits. Unless a field says otherwise larger is
// worse. Relative errors and changes are fractions (0.2 = 20%).
//
// The defaults are rules of thumb — common practice, no source — except
// where a field names its reasoning.
type Thresholds struct {
	// HoldoutWMAPE: Σ|e|/Σ|y| over the holdout weeks. Default {0.10, 0.20}.
	HoldoutWMAPE Limit `json:"holdout_wmape" yaml:"holdout_wmape"`
	// HoldoutMASE: holdout MAE over the in-sample MAE of the (seasonal)
	// naive forecast (Hyndman & Koehler 2006: above 1 the forecast does
	// worse than the naive method does one step ahead in sample).
	// Default {1.0, 1.5}.
	HoldoutMASE Limit `json:"holdout_mase" yaml:"holdout_mase"`
	// HoldoutBias: |mean error| over mean actual. Default {0.05, 0.10}.
	HoldoutBias Limit `json:"holdout_bias" yaml:"holdout_bias"`
	// Skill: 1 − wMAPE(model)/wMAPE(baseline without media); smaller is
	// worse. 0 means the media terms do not help forecast at all.
	// Default {0.10, 0}.
	Skill Limit `json:"skill" yaml:"skill"`
	// BacktestMedian, BacktestWorst: median and worst fold wMAPE of the
	// rolling-origin backtest. Defaults {0.10, 0.20} and {0.15, 0.30}.
	BacktestMedian Limit `json:"backtest_median_wmape" yaml:"backtest_median_wmape"`
	BacktestWorst  Limit `json:"backtest_worst_wmape" yaml:"backtest_worst_wmape"`

	// SpendVIF: variance inflation factor of a channel's spend given the
	// other channels' and the fixed columns. Default {5, 10} (the usual
	// rule of thumb: above 10 collinearity is serious; Kutner, Nachtsheim &
	// Neter 2004, Applied Linear Regression Models, section 10.5, from
	// memory).
	SpendVIF Limit `json:"spend_vif" yaml:"spend_vif"`
	// RecoveryError: median |ROI refit − ROI fitted| / ROI fitted over the
	// simulated panels. Default {0.20, 0.40}; 20% is the project's own
	// acceptance criterion of a fit against a known truth.
	RecoveryError Limit `json:"recovery_error" yaml:"recovery_error"`
	// RecoveryBias: |median signed relative error| of ROI. Default {0.15, 0.30}.
	RecoveryBias Limit `json:"recovery_bias" yaml:"recovery_bias"`

	// QuarterOut: the largest relative change of a channel's ROI when one
	// block of weeks is left out of the fit. Default {0.25, 0.50}. Its
	// p-value compares it with the same largest change on the panels
	// simulated from the fit, which have as many blocks: a longer history
	// has more blocks and a larger largest change, on the data and on the
	// simulated panels alike, so the test does not grow stricter with
	// history as the raw limit does.
	QuarterOut Limit `json:"quarter_out" yaml:"quarter_out"`
	// DecayBounds: the relative change of ROI when the upper decay bound is
	// widened (never narrowed: a narrowed box flags every true decay above
	// it). Default {0.15, 0.30}. Its p-value takes the change over the ROI's
	// SD on the recovery panels as a standard normal z: a change within the
	// sampling noise is no evidence that the bound matters.
	DecayBounds Limit `json:"decay_bounds" yaml:"decay_bounds"`
	// DriftZ: |ROI first half − ROI second half| over the SD of that
	// difference on panels simulated from the fit (so without drift).
	// Default {2.5, 3.5}: with the SD estimated from 20 panels, the
	// two-sided tail of Student's t with 19 degrees of freedom beyond them
	// is 2.2% and 0.24% (scipy.stats.t). Its p-value is that tail for the
	// prediction statistic z/√(1 + 1/R), R panels, R − 1 degrees of freedom.
	DriftZ Limit `json:"drift_z" yaml:"drift_z"`
	// DriftRelative: the relative ROI difference of the halves, used when
	// no spread is known. Default {0.30, 0.50}.
	DriftRelative Limit `json:"drift_relative" yaml:"drift_relative"`
	// ROICV: coefficient of variation of ROI over the draws. Default {0.30, 0.50}.
	ROICV Limit `json:"roi_cv" yaml:"roi_cv"`
	// BreakEvenFlip: share of draws whose marginal ROI lies on the other
	// side of BreakEven than the point fit's. Default {0.10, 0.25}.
	BreakEvenFlip Limit `json:"break_even_flip" yaml:"break_even_flip"`
	// BreakEven is the marginal ROI at which a channel pays for itself;
	// default 1 (currency per currency, before margins).
	BreakEven float64 `json:"break_even" yaml:"break_even"`

	// LiftZ: |model − measured| / √(se² + model_se²). Default {1.5, 2}:
	// the normal distribution's two-sided tail beyond them is 13% and 4.6%.
	LiftZ Limit `json:"lift_z" yaml:"lift_z"`

	// Coverage: share of reconciled weeks whose actual KPI lies inside the
	// forecast's 5%–95% band; smaller is worse. Default {0.75, 0.60}: with
	// 13 weeks at the nominal 90%, covering 9 or fewer has binomial
	// probability 3.4%, 7 or fewer 0.09% (scipy.stats.binom).
	Coverage Limit `json:"coverage" yaml:"coverage"`
	// ReconcileBias: |mean(actual − re-forecast)| / mean actual.
	// Default {0.05, 0.10}.
	ReconcileBias Limit `json:"reconcile_bias" yaml:"reconcile_bias"`

	set map[string]bool // keys given to Set: those checks keep their raw grading
}

// rawKeys maps a tested check's name to the threshold key that, when Set,
// makes it graded by its raw threshold instead of its false-alarm rate.
var rawKeys = map[string]string{
	"accuracy/holdout_wmape":         "holdout_wmape",
	"accuracy/holdout_mase":          "holdout_mase",
	"accuracy/holdout_bias":          "holdout_bias",
	"accuracy/backtest_median_wmape": "backtest_median_wmape",
	"accuracy/backtest_worst_wmape":  "backtest_worst_wmape",
	"stability/quarter_out":          "quarter_out",
	"stability/decay_bounds":         "decay_bounds",
	"stability/drift":                "drift_z",
	"lift/agreement":                 "lift_z",
	"reconciliation/coverage":        "coverage",
}

// IsTest reports whether the check called name tests the model (carries a
// p-value when it can be judged) rather than measuring precision or
// usefulness against a raw limit.
func IsTest(name string) bool { _, ok := rawKeys[name]; return ok }

// keepRaw marks the checks whose raw threshold was Set.
func (th Thresholds) keepRaw(checks []Check) {
	for i := range checks {
		if key, ok := rawKeys[checks[i].Name]; ok && th.set[key] {
			checks[i].RawThreshold = true
		}
	}
}

// DefaultThresholds returns the default limits documented on Thresholds.
func DefaultThresholds() Thresholds {
	return Thresholds{
		HoldoutWMAPE:   Limit{0.10, 0.20},
		HoldoutMASE:    Limit{1.0, 1.5},
		HoldoutBias:    Limit{0.05, 0.10},
		Skill:          Limit{0.10, 0},
		BacktestMedian: Limit{0.10, 0.20},
		BacktestWorst:  Limit{0.15, 0.30},
		SpendVIF:       Limit{5, 10},
		RecoveryError:  Limit{0.20, 0.40},
		RecoveryBias:   Limit{0.15, 0.30},
		QuarterOut:     Limit{0.25, 0.50},
		DecayBounds:    Limit{0.15, 0.30},
		DriftZ:         Limit{2.5, 3.5},
		DriftRelative:  Limit{0.30, 0.50},
		ROICV:          Limit{0.30, 0.50},
		BreakEvenFlip:  Limit{0.10, 0.25},
		BreakEven:      1,
		LiftZ:          Limit{1.5, 2},
		Coverage:       Limit{0.75, 0.60},
		ReconcileBias:  Limit{0.05, 0.10},
	}
}

// LimitNames lists the keys Set accepts, sorted.
func LimitNames() []string {
	var out []string
	t := reflect.TypeOf(Thresholds{})
	for i := range t.NumField() {
		if t.Field(i).IsExported() {
			out = append(out, strings.Split(t.Field(i).Tag.Get("json"), ",")[0])
		}
	}
	sort.Strings(out)
	return out
}

// Set overrides one threshold by its key (the JSON name, e.g.
// "holdout_wmape"): a Limit takes warn and fail, BreakEven one value.
func (th *Thresholds) Set(key string, values ...float64) error {
	v := reflect.ValueOf(th).Elem()
	t := v.Type()
	for i := range t.NumField() {
		if !t.Field(i).IsExported() || strings.Split(t.Field(i).Tag.Get("json"), ",")[0] != key {
			continue
		}
		for _, x := range values {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return fmt.Errorf("threshold %s: values must be finite", key)
			}
		}
		f := v.Field(i)
		if th.set == nil {
			th.set = map[string]bool{}
		}
		th.set[key] = true
		switch f.Interface().(type) {
		case Limit:
			if len(values) != 2 {
				return fmt.Errorf("threshold %s: needs a warn and a fail value", key)
			}
			lower := key == "skill" || key == "coverage" // smaller is worse
			if (lower && values[0] < values[1]) || (!lower && values[0] > values[1]) {
				return fmt.Errorf("threshold %s: warn %g must come before fail %g", key, values[0], values[1])
			}
			f.Set(reflect.ValueOf(Limit{values[0], values[1]}))
		case float64:
			if len(values) != 1 {
				return fmt.Errorf("threshold %s: needs one value", key)
			}
			f.SetFloat(values[0])
		}
		return nil
	}
	return fmt.Errorf("unknown threshold %q (one of %s)", key, strings.Join(LimitNames(), ", "))
}
