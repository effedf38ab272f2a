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
