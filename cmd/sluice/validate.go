package main

import (
	"fmt"
	"io"
	"path/filepath"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/urfave/cli/v2"

	"sluice/optimize"
	"sluice/validation"
)

func validateCommand() *cli.Command {
	return &cli.Command{
		Name:  "validate",
		Usage: "check the model from five angles: holdout, recovery, stability, lift tests, past forecasts",
		Flags: append(modelFlags(),
			&cli.StringFlag{Name: "draws", Usage: "draws file from sluice bootstrap (command line only); without it a bootstrap of --bootstrap-draws runs here"},
			&cli.IntFlag{Name: "bootstrap-draws", Value: DefaultDecisionDraws, Usage: "replicates of the bootstrap run here when no --draws is given (0: skip the checks that need draws)"},
			&cli.BoolFlag{Name: "quiet", Usage: "no progress bar"},
			&cli.BoolFlag{Name: "calibrate", Usage: "also refit with the lift tests in the objective and report the ROI it gives"},
			&cli.StringFlag{Name: "records", Usage: "directory of earlier forecasts (*.json) to reconcile with the data"},
			&cli.IntFlag{Name: "holdout-weeks", Value: 13, Usage: "weeks held out at the end of the data"},
			&cli.IntFlag{Name: "folds", Value: 4, Usage: "origins of the rolling backtest"},
			&cli.IntFlag{Name: "fold-weeks", Value: 13, Usage: "weeks per backtest fold"},
			&cli.IntFlag{Name: "replicates", Value: 20, Usage: "simulated panels of the recovery and drift checks"},
			&cli.IntFlag{Name: "block-weeks", Value: 13, Usage: "weeks left out per stability refit"},
			&cli.StringFlag{Name: "plan", Usage: "plan YAML whose margin sets the break-even marginal ROI, 1/margin (default: margin 1)"},
			&cli.StringFlag{Name: "limits", Usage: "threshold overrides, e.g. holdout_wmape=0.08:0.15,break_even=1.2 (warn:fail)"},
			&cli.BoolFlag{Name: "json", Usage: "print the evidence as JSON instead of the table"},
			&cli.StringFlag{Name: "out", Usage: "write the evidence (JSON) to this file"},
			&cli.BoolFlag{Name: "strict", Usage: "exit non-zero when a check fails (after printing the evidence)"},
			&cli.BoolFlag{Name: "effect-check", Value: true, Usage: "test whether each channel's effectiveness drifted over the history or follows the season (effect/drift, effect/season, and their backtests); --effect-check=false skips them"},
		),
		Action: runValidate,
	}
}

// validateOutput is the JSON form of a validation run.
type validateOutput struct {
	Checks      []validation.Check    `json:"checks"`
	Summary     statusCount           `json:"summary"`
	Seed        uint64                `json:"seed"`
	Inputs      validateInputs        `json:"inputs"`
	Tool        string                `json:"tool"`
	Version     string                `json:"version"`
	Settings    validateSettings      `json:"settings"`
	Thresholds  validation.Thresholds `json:"thresholds"`
	Calibration []calibratedROI       `json:"calibration,omitempty"`
	Pending     []string              `json:"pending_forecasts,omitempty"`
	Notes       []string              `json:"notes"`
	// Effect is the effectiveness checks, drifting then seasonal (none
	// with --effect-check=false).
	Effect []*validation.EffectResult `json:"effectiveness,omitempty"`
}

type statusCount struct {
	Pass int `json:"pass"`
	Warn int `json:"warn"`
	Fail int `json:"fail"`
}

type validateInputs struct {
	inputHashes
	Draws       string      `json:"draws,omitempty"`
	Lifts       string      `json:"lifts,omitempty"`
	LiftsSHA256 string      `json:"lifts_sha256,omitempty"`
	Records     []hashedRef `json:"records,omitempty"`
}

type hashedRef struct {
	File   string `json:"file"`
	SHA256 string `json:"sha256"`
}

type validateSettings struct {
	HoldoutWeeks int  `json:"holdout_weeks"`
	Folds        int  `json:"folds"`
	FoldWeeks    int  `json:"fold_weeks"`
	Replicates   int  `json:"replicates"`
	BlockWeeks   int  `json:"block_weeks"`
	Draws        int  `json:"draws"` // 0: the checks that need bootstrap draws did not run
	Calibrate    bool `json:"calibrate"`
}

type calibratedROI struct {
	Channel string  `json:"channel"`
	ROI     float64 `json:"roi"`
	ROICal  float64 `json:"roi_calibrated"`
}

func runValidate(c *cli.Context) error {
	o, err := newOpts(c)
	if err != nil {
		return err
	}
	in, err := loadModelInput(o)
	if err != nil {
		return err
	}
	th := validation.DefaultThresholds()
	breakEven := "break-even marginal ROI 1 (KPI value per currency): margin 1, as no --plan gives one"
	if path := o.String("plan"); path != "" {
		plan, err := optimize.LoadPlan(path)
		if err != nil {
			return err
		}
		if err := reconcilePlan(in, plan); err != nil {
			return err
		}
		th.BreakEven = plan.BreakEvenMROI()
		breakEven = fmt.Sprintf("break-even marginal ROI %.3g (KPI value per currency) = 1/margin, margin %g from %s", th.BreakEven, plan.Margin, path)
	}
	if err := applyLimits(&th, o.List("limits")); err != nil {
		return err
	}
	if th.BreakEven != validation.DefaultThresholds().BreakEven && strings.Contains(strings.Join(o.List("limits"), ","), "break_even=") {
		breakEven = fmt.Sprintf("break-even marginal ROI %.3g (KPI value per currency), from --limits", th.BreakEven)
	}
	set := validation.Settings{Seed: in.Seed, Workers: in.Workers, ValuePerKPI: in.ValuePerKPI,
		HoldoutWeeks: o.Int("holdout-weeks"), Folds: o.Int("folds"), FoldWeeks: o.Int("fold-weeks"),
		Replicates: o.Int("replicates"), BlockWeeks: o.Int("block-weeks")}
	for _, f := range []string{"holdout-weeks", "folds", "fold-weeks", "replicates", "block-weeks"} {
		if o.Int(f) < 1 {
			return fmt.Errorf("--%s %d must be at least 1", f, o.Int(f))
		}
	}
	out := validateOutput{Tool: "sluice", Version: version, Seed: in.Seed,
		Inputs: validateInputs{inputHashes: inputHashes{Data: in.DataPath, DataSHA256: in.DataSHA256, SpecSHA256: in.SpecSHA256}},
		Settings: validateSettings{HoldoutWeeks: set.HoldoutWeeks, Folds: set.Folds, FoldWeeks: set.FoldWeeks,
			Replicates: set.Replicates, BlockWeeks: set.BlockWeeks, Calibrate: o.Bool("calibrate")},
		Thresholds: th}
	prob := validation.Problem{Panel: in.Panel, Design: in.Design, Calibrate: o.Bool("calibrate")}
	if c.String("draws") != "" || o.Int("bootstrap-draws") > 0 {
		d, path, err := drawsFor(c, in, c.String("draws"), o.Int("bootstrap-draws"), o.Bool("quiet"))
		if err != nil {
			return err
		}
		prob.Draws = &validation.Draws{Params: d.Params(), Failed: d.Failed()}
		out.Settings.Draws = len(d.Replicates)
		out.Inputs.Draws = path
	}
	if path := o.String("lifts"); path != "" {
		if prob.Lifts, err = validation.LoadLifts(path, in.Panel); err != nil {
			return err
		}
		out.Inputs.Lifts = path
		if out.Inputs.LiftsSHA256, err = sha256File(path); err != nil {
			return err
		}
	} else if prob.Calibrate {
		return withHint(fmt.Errorf("--calibrate needs lift tests"), "pass --lifts lifts.csv")
	}
	if dir := o.String("records"); dir != "" {
		if prob.Forecasts, err = validation.LoadForecasts(dir); err != nil {
			return err
		}
		for _, fc := range prob.Forecasts {
			h, err := sha256File(fc.Source)
			if err != nil {
				return err
			}
			out.Inputs.Records = append(out.Inputs.Records, hashedRef{File: fc.Source, SHA256: h})
		}
	}
	res, err := validation.Run(prob, th, set)
	if err != nil {
		return err
	}
	if o.Bool("effect-check") {
		evs, err := validation.EffectEvidence(in.Design, in.Panel.KPI, validation.EffectSettings{Seed: in.Seed, Workers: in.Workers})
		if err != nil {
			return err
		}
		for _, er := range evs {
			out.Effect = append(out.Effect, er)
			res.Evidence.Checks = append(res.Evidence.Checks, er.Checks()...)
			for _, n := range er.Notes {
				out.Notes = append(out.Notes, "effectiveness: "+n)
			}
		}
		if er := validation.ChooseEffect(evs); er != nil && !in.Spec.AnyDrifting() {
			names := er.Named()
			out.Notes = append(out.Notes, fmt.Sprintf("effectiveness is %s for %s and that specification forecasts the last weeks better: refit with --%s %s",
				er.Kind, strings.Join(names, ", "), er.Kind, strings.Join(names, ",")))
		}
	}
	out.Checks = res.Evidence.Checks
	sum := res.Evidence.Summary()
	out.Summary = statusCount{Pass: sum[validation.Pass], Warn: sum[validation.Warn], Fail: sum[validation.Fail]}
	out.Pending = res.Pending
	if cal := res.Calibration; cal != nil {
		for k, name := range cal.Channels {
			out.Calibration = append(out.Calibration, calibratedROI{Channel: name, ROI: cal.Before[k], ROICal: cal.After[k]})
		}
	}
	out.Notes = append(out.Notes, breakEven)
	if prob.Draws == nil {
		out.Notes = append(out.Notes, "without bootstrap draws the checks of the ROI spread over draws (stability/roi_cv, stability/break_even) did not run and lift z counts the experiment's error only")
	} else if out.Inputs.Draws == "" {
		out.Notes = append(out.Notes, fmt.Sprintf("the checks that need draws used a bootstrap of %d replicates run here (seed %d)", out.Settings.Draws, in.Seed))
	}
	if o.String("records") != "" && len(prob.Forecasts) == 0 {
		out.Notes = append(out.Notes, "no *.json forecasts in "+o.String("records"))
	}
	if path := o.String("out"); path != "" {
		if err := writeJSON(path, out); err != nil {
			return err
		}
	}
	if o.Bool("json") {
		if err := printJSON(c.App.Writer, out); err != nil {
			return err
		}
	} else {
		printEvidence(c.App.Writer, in, out)
	}
	if o.Bool("strict") {
		return strictFailure(out.Checks)
	}
	return nil
}

// applyLimits parses key=warn:fail (or key=value for break_even) overrides.
func applyLimits(th *validation.Thresholds, items []string) error {
	for _, it := range items {
		key, val, ok := strings.Cut(it, "=")
		if !ok {
			return withHint(fmt.Errorf("--limits: %q is not key=warn:fail", it), "e.g. --limits holdout_wmape=0.08:0.15; keys: %s",
				strings.Join(validation.LimitNames(), ", "))
		}
		var vals []float64
		for _, s := range strings.Split(val, ":") {
			v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
			if err != nil {
				return fmt.Errorf("--limits: %s: %q is not a number", key, s)
			}
			vals = append(vals, v)
		}
		if err := th.Set(strings.TrimSpace(key), vals...); err != nil {
			return fmt.Errorf("--limits: %w", err)
		}
	}
	return nil
}

func printEvidence(w io.Writer, in *modelInput, out validateOutput) {
	fmt.Fprintf(w, "validation of the %s model over %d weeks (%s); seed %d\n\n", in.Panel.KPIName, in.Panel.NumWeeks(),
		filepath.Base(in.DataPath), out.Seed)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "status\tcheck\tscope\tmetric\tp-value\tfails below\tdetail")
	for _, c := range out.Checks {
		p, rate := "-", "raw "+plain(c.Threshold, 4)
		switch {
		case c.Basis == validation.BasisPrecision:
			rate = "precision"
		case c.PValue != nil && !c.RawThreshold:
			p, rate = fmt.Sprintf("%.3g", *c.PValue), fmt.Sprintf("%.3g", c.Rate)
		case c.PValue != nil:
			p = fmt.Sprintf("%.3g", *c.PValue)
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\n", c.Status, c.Name, c.Scope, plain(c.Metric, 4), p, rate, c.Detail)
	}
	tw.Flush()
	if len(out.Calibration) > 0 {
		fmt.Fprintln(w, "\ncalibrated with the lift tests:")
		for _, c := range out.Calibration {
			fmt.Fprintf(w, "  %-16s ROI %s -> %s\n", c.Channel, plain(c.ROI, 3), plain(c.ROICal, 3))
		}
	}
	for _, p := range out.Pending {
		fmt.Fprintf(w, "\n%s: no week of the forecast is in the data yet\n", p)
	}
	fmt.Fprintf(w, "\n%d pass, %d warn, %d fail\n", out.Summary.Pass, out.Summary.Warn, out.Summary.Fail)
	for _, n := range out.Notes {
		fmt.Fprintln(w, "note:", n)
	}
	fmt.Fprintln(w, "a tested check fails when its p-value (the chance of a metric this bad if the fitted model were right) is below its")
	fmt.Fprintln(w, "false-alarm rate: 5% per family, shared over its checks; \"precision\" checks measure how settled the model is and")
	fmt.Fprintln(w, "are carried by the risk limits of propose; \"raw\" checks use a fixed limit")
	fmt.Fprintln(w, "the checks estimate how far the model can be trusted; they do not guarantee it")
}
