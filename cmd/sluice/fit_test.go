package main

import (
	"strings"
	"testing"

	"sluice/internal/varpro"
	"sluice/model"
)

// fitWarnings, rule by rule: a best start that did not converge, some
// starts that did not, Durbin–Watson outside [1.5, 2.5] (rule of thumb,
// common practice, no source), and a KPI named like a count read as
// currency. Each warning carries its hint.
func TestFitWarnings(t *testing.T) {
	in := &modelInput{Panel: &model.Panel{KPIName: "revenue"}, ValuePerKPI: 1}
	units := &modelInput{Panel: &model.Panel{KPIName: "signups"}, ValuePerKPI: 1}
	sum := func(dw float64) fitSummary { return fitSummary{Fit: fitInfo{Stats: model.Stats{DurbinWatson: dw}}} }
	ok := &model.FitResult{Status: varpro.Converged, Converged: 6, StartsTried: 6}
	cases := []struct {
		name  string
		s     fitSummary
		fr    *model.FitResult
		in    *modelInput
		given bool
		want  []string // substrings, one per warning, in order; nil: none
	}{
		{"clean", sum(2), ok, in, false, nil},
		{"DW at the band's edges is fine", sum(1.5), ok, in, false, nil},
		{"DW low", sum(1.2), ok, in, false, []string{"Durbin–Watson 1.20 is far from 2 (outside 1.5 to 2.5): the residuals are positively autocorrelated"}},
		{"DW high", sum(2.7), ok, in, false, []string{"negatively autocorrelated"}},
		{"not converged", sum(2), &model.FitResult{Status: varpro.MaxEvaluations, Converged: 2, StartsTried: 6}, in, false,
			[]string{`status "evaluation limit reached", not converged`}},
		{"some starts failed", sum(2), &model.FitResult{Status: varpro.Converged, Converged: 4, StartsTried: 6}, in, false,
			[]string{"only 4 of 6 starts converged"}},
		{"units without a value", sum(2), ok, units, false, []string{`kpi "signups" is read as currency`}},
		{"units with a value given", sum(2), ok, units, true, nil},
	}
	for _, c := range cases {
		got := fitWarnings(c.s, c.fr, c.in, c.given)
		if len(got) != len(c.want) {
			t.Errorf("%s: %d warnings %q, want %d", c.name, len(got), got, len(c.want))
			continue
		}
		for i, w := range c.want {
			if !strings.Contains(got[i], w) || !strings.Contains(got[i], "; hint: ") {
				t.Errorf("%s: warning %q lacks %q or a hint", c.name, got[i], w)
			}
		}
	}
}
