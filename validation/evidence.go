// Package validation tests a fitted response model from five independent
// angles and turns each test into evidence the gate can act on: holdout and
// backtest accuracy, parameter recovery, stability and robustness, agreement
// with lift tests, and reconciliation of past forecasts with what happened.
package validation

// Status is the outcome of one check.
type Status string

const (
	Pass Status = "pass"
	Warn Status = "warn"
	Fail Status = "fail"
)

// Family names the angle a check comes from.
type Family string

const (
	Accuracy       Family = "accuracy"       // holdout and backtest
	Recovery       Family = "recovery"       // parameter recovery on simulated data
	Stability      Family = "stability"      // stability and robustness
	Lift           Family = "lift"           // agreement with lift tests
	Reconciliation Family = "reconciliation" // past forecasts against actuals
)

// Global is the scope of a check about the whole model; a channel-scoped
// check carries the channel's name instead.
const Global = "global"

// Check is one piece of evidence.
type Check struct {
	Name      string  `json:"name"`
	Family    Family  `json:"family"`
	Scope     string  `json:"scope"`
	Status    Status  `json:"status"`
	Metric    float64 `json:"metric"`
	Threshold float64 `json:"threshold"`
	Detail    string  `json:"detail"`
	// PValue, for a check that tests the model, is the probability that
	// its metric would be at least this bad if the fitted model were right
	// (see rates.go); Null says how it was computed. Rate is the p-value
	// below which the check fails: its false-alarm rate (Grade).
	PValue *float64 `json:"p_value,omitempty"`
	Null   string   `json:"null,omitempty"`
	Rate   float64  `json:"false_alarm_rate,omitempty"`
	// Basis is "precision" for a check that measures how precisely the
	// data settle the model rather than testing it; the risk figures carry
	// the same information through the draws, so the gate does not act on
	// it again.
	Basis string `json:"basis,omitempty"`
	// RawThreshold is set when the check is graded by its raw threshold
	// although it has a p-value: the user or the policy set that threshold.
	RawThreshold bool `json:"raw_threshold,omitempty"`
}

// GradeRaw grades c by a raw limit on its metric, the limit's order saying
// the direction (Warn > Fail: smaller is worse), and marks it RawThreshold.
func (c *Check) GradeRaw(l Limit) {
	if l.Warn > l.Fail {
		c.Status = l.below(c.Metric)
	} else {
		c.Status = l.above(c.Metric)
	}
	c.Threshold, c.RawThreshold = l.Fail, true
}

// Evidence is the set of checks a validation run produced.
type Evidence struct {
	Checks []Check `json:"checks"`
}

// Summary counts the checks by status.
func (e Evidence) Summary() map[Status]int {
	m := map[Status]int{Pass: 0, Warn: 0, Fail: 0}
	for _, c := range e.Checks {
		m[c.Status]++
	}
	return m
}
