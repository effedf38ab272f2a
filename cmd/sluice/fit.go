package main

import (
	"encoding/json"
	"fmt"
	"io"
	"text/tabwriter"

	"github.com/urfave/cli/v2"

	"sluice/internal/atomicfile"
	"sluice/model"
	"sluice/validation"
)

func fitCommand() *cli.Command {
	return &cli.Command{
		Name:  "fit",
		Usage: "fit the response model to a weekly panel and print what each channel returns",
		Flags: append(modelFlags(),
			&cli.BoolFlag{Name: "json", Usage: "print a JSON summary instead of the table"},
			&cli.StringFlag{Name: "out", Usage: "write the fitted model (JSON) to this file"},
			&cli.BoolFlag{Name: "effect-check", Usage: "also test whether each channel's effectiveness changed over the history (drifting fit, bootstrap, backtest against the constant model)"},
		),
		Action: func(c *cli.Context) error {
			o, err := newOpts(c)
			if err != nil {
				return err
			}
			in, err := loadModelInput(o)
			if err != nil {
				return err
			}
			fr, err := in.Design.Fit(in.Panel.KPI, model.FitSettings{Seed: in.Seed, Workers: in.Workers})
			if err != nil {
				return err
			}
			sum := newFitSummary(in, fr)
			if o.Bool("effect-check") {
				for _, kind := range []string{model.EffectDrifting, model.EffectSeasonal} {
					er, err := validation.Effectiveness(in.Design, in.Panel.KPI,
						validation.EffectSettings{Seed: in.Seed, Workers: in.Workers, Kind: kind})
					if err != nil {
						return err
					}
					sum.Effect = append(sum.Effect, er)
				}
			}
			if out := o.String("out"); out != "" {
				if err := writeJSON(out, sum); err != nil {
					return err
				}
			}
			if o.Bool("json") {
				return printJSON(c.App.Writer, sum)
			}
			printFitTable(c.App.Writer, sum)
			return nil
		},
	}
}

// fitSummary is the JSON form of a fit (stdout with --json, --out file).
type fitSummary struct {
	Tool     string                 `json:"tool"`
	Version  string                 `json:"version"`
	Seed     uint64                 `json:"seed"`
	Inputs   inputHashes            `json:"inputs"`
	KPI      string                 `json:"kpi"`
	Weeks    int                    `json:"weeks"`
	Horizon  int                    `json:"horizon_weeks"`
	Channels []model.ChannelSummary `json:"channels"`
	Fit      fitInfo                `json:"fit"`
	Params   model.Params           `json:"params"`
	Fixed    []string               `json:"fixed_columns"`
	// Drifting is each drifting channel's effectiveness in the last week
	// over its history average (from the fit); Effect the effectiveness
	// check (fit --effect-check).
	Drifting map[string]float64         `json:"drifting,omitempty"`
	Seasonal map[string]float64         `json:"seasonal,omitempty"` // next horizon's effectiveness over the year's mean
	Effect   []*validation.EffectResult `json:"effectiveness,omitempty"`
}

type inputHashes struct {
	Data       string `json:"data"`
	DataSHA256 string `json:"data_sha256"`
	SpecSHA256 string `json:"spec_sha256,omitempty"`
}

type fitInfo struct {
	model.Stats
	SSE         float64 `json:"sse"`
	Status      string  `json:"status"`
	Starts      int     `json:"starts"`
	Converged   int     `json:"starts_converged"`
	Evaluations int     `json:"evaluations"`
	Parameters  int     `json:"parameters"`
}

func newFitSummary(in *modelInput, fr *model.FitResult) fitSummary {
	var drifting, seasonal map[string]float64
	for k, c := range in.Spec.Channels {
		if c.Seasonal() {
			if seasonal == nil {
				seasonal = map[string]float64{}
			}
			seasonal[c.Name] = in.Design.SeasonLift(fr.Params, k)
		}
		if c.Drifting() {
			if drifting == nil {
				drifting = map[string]float64{}
			}
			drifting[c.Name] = in.Design.EffectChange(fr.Params, k)
		}
	}
	return fitSummary{
		Drifting: drifting,
		Seasonal: seasonal,
		Tool:     "sluice", Version: version, Seed: in.Seed,
		Inputs:   inputHashes{Data: in.DataPath, DataSHA256: in.DataSHA256, SpecSHA256: in.SpecSHA256},
		KPI:      in.Panel.KPIName,
		Weeks:    in.Panel.NumWeeks(),
		Horizon:  in.Spec.Horizon,
		Channels: in.Design.Summarize(fr.Params, in.ValuePerKPI),
		Fit: fitInfo{Stats: model.FitStats(in.Panel.KPI, fr.Residuals, in.Spec.NumParams()),
			SSE: fr.SSE, Status: fr.Status.String(), Starts: fr.StartsTried, Converged: fr.Converged,
			Evaluations: fr.Evaluations, Parameters: in.Spec.NumParams()},
		Params: fr.Params,
		Fixed:  in.Spec.FixedNames(),
	}
}

func printFitTable(w io.Writer, s fitSummary) {
	fmt.Fprintf(w, "%s over %d weeks; ROI and marginal ROI in currency per currency; current spend = mean of the last %d weeks\n\n",
		s.KPI, s.Weeks, model.CurrentWeeks)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "channel\tspend share\tcontribution share\tROI\tmarginal ROI\thalf-life (weeks)\tsaturation at current\t")
	for _, c := range s.Channels {
		fmt.Fprintf(tw, "%s\t%.1f%%\t%.1f%%\t%.2f\t%.2f\t%.1f\t%.0f%%\t\n", c.Name, 100*c.SpendShare,
			100*c.ContributionShare, c.ROI, c.MROI, c.HalfLifeWeeks, 100*c.Saturation)
	}
	tw.Flush()
	f := s.Fit
	fmt.Fprintf(w, "\nin-sample R² %.3f  wMAPE %.1f%%  residual SD %s  Durbin–Watson %.2f\n", f.R2, 100*f.WMAPE, plain(f.Sigma, 4), f.DurbinWatson)
	fmt.Fprintf(w, "fit: %s; %d of %d starts converged; best SSE %s; %d evaluations; %d parameters; seed %d\n",
		f.Status, f.Converged, f.Starts, plain(f.SSE, 6), f.Evaluations, f.Parameters, s.Seed)
	fmt.Fprintln(w, "in-sample fit is not evidence of a good model: run `sluice validate` for holdout and recovery checks")
	printEffect(w, s)
}

// printEffect adds the lines about effectiveness that changes over time:
// each drifting channel's change in the fit, then the effectiveness check.
func printEffect(w io.Writer, s fitSummary) {
	if len(s.Drifting) > 0 {
		fmt.Fprintln(w)
		for _, c := range s.Channels {
			if v, ok := s.Drifting[c.Name]; ok {
				fmt.Fprintf(w, "drifting %s: effectiveness in the last week %+.0f%% against its history average (ROI above is over the history, marginal ROI at the last week's)\n", c.Name, 100*(v-1))
				if v < 0.05 {
					fmt.Fprintf(w, "warning: %s's effectiveness falls to about zero by the last week, so its horizon response is about zero: check the last weeks' data and spend; hint: compare with fit --effect-check\n", c.Name)
				}
			}
		}
	}
	for _, c := range s.Channels {
		if v, ok := s.Seasonal[c.Name]; ok {
			fmt.Fprintf(w, "seasonal %s: effectiveness over the next %d weeks %+.0f%% against its yearly average (marginal ROI above is the next weeks')\n", c.Name, s.Horizon, 100*(v-1))
		}
	}
	for _, e := range s.Effect {
		printEffectCheck(w, e)
	}
}

// printEffectCheck prints one effectiveness check (drifting or seasonal).
func printEffectCheck(w io.Writer, e *validation.EffectResult) {
	fmt.Fprintf(w, "\neffectiveness check, %s (every channel %s, %d of %d bootstrap refits, named when |z| > %.2f: %.0f%% family-wise false alarms):\n",
		e.Kind, e.Kind, e.Replicates, e.Tried, e.ZCrit, 100*e.Alpha)
	named := 0
	for _, c := range e.Channels {
		mark := "steady"
		if c.Changed {
			mark, named = "CHANGED", named+1
		}
		fmt.Fprintf(w, "  %s %s: %s, z %+.1f\n", mark, c.Name, c.Words(), c.Z)
	}
	if len(e.Origins) > 0 {
		fmt.Fprintf(w, "  backtest over the last weeks (%d origins): %s/constant forecast RMSE %.3f\n", len(e.Origins), e.Kind, e.BacktestRatio)
	}
	for _, n := range e.Notes {
		fmt.Fprintf(w, "  note: %s\n", n)
	}
	if named > 0 && e.Prefer == e.Kind {
		fmt.Fprintf(w, "  evidence favours the %s specification: hint: refit with --%s naming the changed channels (or all)\n", e.Kind, e.Kind)
	} else {
		fmt.Fprintf(w, "  evidence favours the %s specification\n", e.Prefer)
	}
}

func printJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

// writeJSON writes v as indented JSON atomically.
func writeJSON(path string, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return err
	}
	return atomicfile.Write(path, append(b, '\n'), 0o644)
}
