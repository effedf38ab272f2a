package validation

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"sluice/model"
)

// Problem is what to validate: a model design on a panel, optionally with
// its point fit, lift tests, earlier forecasts and bootstrap draws.
type Problem struct {
	Panel  *model.Panel  // the data; Panel.KPI is what the model explains
	Design *model.Design // built from Panel
	Fit    *model.FitResult
	// Fit is the point fit; nil means Run fits it (seeded multi-start).

	Lifts     []LiftTest // optional; agreement checks per test
	Calibrate bool       // also refit with the lift tests in the objective
	Forecasts []*Forecast
	// Draws, if not nil, adds the checks that need the bootstrap (ROI CV,
	// break-even flips) and the model's uncertainty to the lift z.
	Draws *Draws
}

// Result holds the evidence and each family's figures.
type Result struct {
	Evidence    Evidence
	Fit         *model.FitResult
	Backtest    *BacktestResult
	Recovery    *RecoverResult
	Robust      *RobustResult
	Draws       *DrawsResult       // nil without draws
	Lifts       *LiftResult        // nil without lift tests
	Calibration *CalibrationResult // nil unless asked for
	Reconciled  []*ReconcileResult
	Pending     []string // forecasts none of whose weeks are in the data yet
}

// Run runs the five families of checks and grades them by th.
func Run(p Problem, th Thresholds, set Settings) (*Result, error) {
	set = set.withDefaults()
	if p.Panel == nil || p.Design == nil {
		panic("validation: Run needs a panel and its design")
	}
	y := p.Panel.KPI
	d := p.Design
	r := &Result{Fit: p.Fit}
	if r.Fit == nil {
		f, err := d.Fit(y, model.FitSettings{Seed: set.Seed, Workers: set.Workers})
		if err != nil {
			return nil, fmt.Errorf("point fit: %w", err)
		}
		r.Fit = f
	}
	var err error
	if r.Backtest, err = backtest(d, y, set, &r.Fit.Params); err != nil {
		return nil, err
	}
	add := func(c []Check) { r.Evidence.Checks = append(r.Evidence.Checks, c...) }
	add(r.Backtest.Checks(th))
	add(IdentificationChecks(d, r.Fit.Params))
	nv := &nullValues{}
	if r.Recovery, err = recoverWith(d, r.Fit, set, nv); err != nil {
		return nil, err
	}
	add(r.Recovery.Checks(th))
	if p.Draws != nil {
		if r.Draws, err = DrawSpread(d, r.Fit, *p.Draws, th.BreakEven, set); err != nil {
			return nil, err
		}
	}
	if r.Robust, err = Robustness(d, y, r.Fit, set); err != nil {
		return nil, err
	}
	r.Robust.RecoverySD = r.Recovery.SD
	add(r.Robust.Checks(th))
	if r.Draws != nil {
		add(r.Draws.Checks(th))
	}
	if len(p.Lifts) > 0 {
		r.Lifts = CompareLifts(d, r.Fit, p.Lifts, p.Draws)
		add(r.Lifts.Checks(th))
		if p.Calibrate {
			if r.Calibration, err = Calibrate(d, y, r.Fit, p.Lifts, set); err != nil {
				return nil, err
			}
		}
	}
	for _, fc := range p.Forecasts {
		rr, err := Reconcile(p.Panel, fc)
		if errors.Is(err, ErrNoWeeks) {
			r.Pending = append(r.Pending, fc.Source)
			continue
		}
		if err != nil {
			return nil, err
		}
		r.Reconciled = append(r.Reconciled, rr)
		add(rr.Checks(th))
	}
	attachNull(r.Evidence.Checks, nv)
	th.keepRaw(r.Evidence.Checks)
	Grade(r.Evidence.Checks, set.Rates)
	return r, nil
}

// nullSpec says, per check tested against simulated panels, whether
// smaller is worse and whether it is compared on a log scale. accuracy/skill
// is not here: it asks whether the media terms help forecast at all, a
// requirement of usefulness rather than a test of the model (a right model
// of a channel with a tiny effect has no skill either), so it keeps its raw
// threshold; the rehearsal reports how often it fires.
var nullSpec = map[string]struct{ lowerWorse, log bool }{
	"accuracy/holdout_wmape":         {false, true},
	"accuracy/holdout_mase":          {false, true},
	"accuracy/holdout_bias":          {false, true},
	"accuracy/backtest_median_wmape": {false, true},
	"accuracy/backtest_worst_wmape":  {false, true},
	"stability/quarter_out":          {false, true},
}

// attachNull gives each check its p-value: from the simulated panels for
// those in nullSpec, from the normal distribution for lift agreement (its
// metric |z| is standard normal when model and test agree; the test's
// and the model's errors taken as normal).
func attachNull(checks []Check, nv *nullValues) {
	for i := range checks {
		c := &checks[i]
		if strings.HasPrefix(c.Detail, "not judged") {
			continue
		}
		if c.Name == "lift/agreement" {
			c.PValue, c.Null = ptr(twoSidedNormal(c.Metric)), "normal"
			continue
		}
		spec, ok := nullSpec[c.Name]
		if !ok {
			continue
		}
		key := c.Name + "/" + c.Scope
		p := nv.pValue(key, c.Metric, spec.lowerWorse, spec.log)
		if math.IsNaN(p) {
			c.Detail += fmt.Sprintf(" (false-alarm rate not measured: %d simulated panels gave this metric)", nv.count(key))
			continue
		}
		c.PValue, c.Null = ptr(p), fmt.Sprintf("simulated (%d panels)", nv.count(key))
	}
}
