package main

import (
	"fmt"
	"os"
	"strings"

	"sluice/model"
	"sluice/optimize"
)

// settingSource says where a flag's value came from, for messages that
// name both places of a contradiction: "--value-per-kpi", "SLUICE_VALUE_PER_KPI",
// "sluice.yaml (value-per-kpi)", or "" when it was left at its default.
func settingSource(o *opts, name string) string {
	switch {
	case o.c.IsSet(name):
		return "--" + name
	case !o.v.IsSet(name):
		return ""
	}
	env := "SLUICE_" + strings.ToUpper(strings.ReplaceAll(name, "-", "_"))
	if _, ok := os.LookupEnv(env); ok {
		return env
	}
	return fmt.Sprintf("%s (%s)", configFile, name)
}

// settingSources records where the value per KPI unit and the horizon came
// from, and refuses a --horizon (or its config) that contradicts the spec
// file's horizon_weeks, naming both.
func settingSources(o *opts, in *modelInput) (map[string]string, error) {
	src := map[string]string{
		"value-per-kpi": settingSource(o, "value-per-kpi"),
		"horizon":       settingSource(o, "horizon"),
	}
	if in.SpecPath == "" {
		return src, nil
	}
	f, err := model.LoadSpecFile(in.SpecPath)
	if err != nil || f.Horizon == 0 {
		return src, err
	}
	spec := in.SpecPath + " (horizon_weeks)"
	if flag := src["horizon"]; flag != "" && o.Int("horizon") != f.Horizon {
		return nil, withHint(fmt.Errorf("%s %d contradicts %s %d", flag, o.Int("horizon"), spec, f.Horizon),
			"give the planning horizon in one place only, or make both the same")
	}
	if src["horizon"] == "" {
		src["horizon"] = spec
	}
	return src, nil
}

// reconcilePlan makes the plan and the model inputs mean one thing by each
// number, or refuses naming both places:
//
//   - value per KPI unit: the plan's value_per_kpi and --value-per-kpi (or
//     its config) must agree when both are given; when only one is given it
//     applies to both, so ROI in the fit and the plan's economics use the
//     same value;
//   - horizon: the plan's horizon_weeks and --horizon or the spec's
//     horizon_weeks must agree when both are given; when only the plan
//     gives one the model's curves use it too.
//
// The plan itself refuses a margin outside (0, 1] and a horizon outside
// 1–104 at their lines.
func reconcilePlan(in *modelInput, plan *optimize.Plan) error {
	if src := in.Sources["value-per-kpi"]; src != "" {
		if plan.ValueSet() && plan.ValuePerKPI != in.ValuePerKPI {
			return withHint(fmt.Errorf("%s: value_per_kpi %g contradicts %s %g", plan.Locate("value_per_kpi"), plan.ValuePerKPI, src, in.ValuePerKPI),
				"give the currency value of one KPI unit in one place only, or make both the same")
		}
		plan.ValuePerKPI = in.ValuePerKPI
	} else if plan.ValueSet() {
		in.ValuePerKPI = plan.ValuePerKPI
	}
	if src := in.Sources["horizon"]; src != "" {
		if plan.HorizonSet() && plan.HorizonWeeks != in.Spec.Horizon {
			return withHint(fmt.Errorf("%s: horizon_weeks %d contradicts %s %d", plan.Locate("horizon_weeks"), plan.HorizonWeeks, src, in.Spec.Horizon),
				"give the planning horizon in one place only, or make both the same")
		}
		plan.HorizonWeeks = in.Spec.Horizon
	} else if plan.HorizonSet() {
		in.Spec.Horizon = plan.HorizonWeeks
		in.Design.Spec.Horizon = plan.HorizonWeeks
	}
	return nil
}
