package main

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"
	"text/tabwriter"

	"github.com/urfave/cli/v2"

	"sluice/internal/atomicfile"
	"sluice/internal/varpro"
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
				if sum.Effect, err = validation.EffectEvidence(in.Design, in.Panel.KPI,
					validation.EffectSettings{Seed: in.Seed, Workers: in.Workers}); err != nil {
					return err
				}
			}
			sum.Warnings = fitWarnings(sum, fr, in, o.isSet("value-per-kpi"))
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
	// ROIUnit says what ROI and mroi count: KPI value per currency.
	ROIUnit string       `json:"roi_unit"`
	Fit     fitInfo      `json:"fit"`
	Params  model.Params `json:"params"`
	Fixed   []string     `json:"fixed_columns"`
	// Identification names, per channel, the parameters left on a bound
	// of their box and an effect fitted to zero (model.Identify).
	Identification []model.Identification `json:"identification"`
	// Warnings are the fit's own doubts about itself, one line each with
	// its hint after "hint: ".
	Warnings []string `json:"warnings,omitempty"`
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
		ROIUnit:        "KPI value per currency (value per KPI unit applied; not profit: break-even is 1/margin)",
		Params:         fr.Params,
		Fixed:          in.Spec.FixedNames(),
		Identification: in.Design.Identify(fr.Params),
	}
}

// Durbin–Watson outside [dwLow, dwHigh] is warned about: the residuals are
// autocorrelated, so the fit misses a structure (a trend, a season, a
// carryover) and in-sample errors understate the real ones. The band is a
// rule of thumb (common practice, no source).
const dwLow, dwHigh = 1.5, 2.5

// moneyWords mark a KPI column that is already money; see fitWarnings.
var moneyWords = []string{"revenue", "sales", "value", "gmv", "turnover", "income", "profit", "margin", "amount", "spend", "eur", "usd", "gbp"}

// fitWarnings lists what the fit says about itself: a fit that did not
// converge, Durbin–Watson far from 2, and a KPI that looks like a count of
// units read as currency. The last rule: when --value-per-kpi is not given
// (nor in sluice.yaml or SLUICE_VALUE_PER_KPI) and the KPI's column name
// contains none of moneyWords, ROI would be KPI units per currency, so fit
// says so with a hint. Each warning is "text; hint: fix".
func fitWarnings(s fitSummary, fr *model.FitResult, in *modelInput, valueGiven bool) []string {
	var out []string
	if fr.Status != varpro.Converged {
		out = append(out, fmt.Sprintf("the best start of the fit stopped with status %q, not converged; hint: raise --starts or narrow the bounds in --spec, and read every figure below as provisional", fr.Status))
	} else if fr.Converged < fr.StartsTried {
		out = append(out, fmt.Sprintf("only %d of %d starts converged; hint: the best start converged, but raise --starts if the figures change between runs with other seeds", fr.Converged, fr.StartsTried))
	}
	if dw := s.Fit.DurbinWatson; dw < dwLow || dw > dwHigh {
		kind := "positively"
		if dw > dwHigh {
			kind = "negatively"
		}
		out = append(out, fmt.Sprintf("Durbin–Watson %.2f is far from 2 (outside %.1f to %.1f): the residuals are %s autocorrelated, so the model misses some structure and in-sample figures flatter it; hint: add the control or season that drives the KPI, check for a break in the data, and rely on `sluice validate`'s holdout and backtest", dw, dwLow, dwHigh, kind))
	}
	if !valueGiven && in.ValuePerKPI == 1 {
		name := strings.ToLower(in.Panel.KPIName)
		money := false
		for _, w := range moneyWords {
			money = money || strings.Contains(name, w)
		}
		if !money {
			out = append(out, fmt.Sprintf("kpi %q is read as currency (value per KPI unit 1), so ROI is %s per currency; hint: if it counts units (orders, sign-ups, visits), give --value-per-kpi, the currency one unit is worth", in.Panel.KPIName, in.Panel.KPIName))
		}
	}
	return out
}

func printFitTable(w io.Writer, s fitSummary) {
	fmt.Fprintf(w, "%s over %d weeks; ROI and marginal ROI are KPI value per currency (not profit: break-even is 1/margin); current spend = mean of the last %d weeks\n\n",
		s.KPI, s.Weeks, model.CurrentWeeks)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "channel\tspend share\tcontribution share\tROI\tmarginal ROI\thalf-life (weeks)\tsaturation at current\tsettled by the data\t")
	for k, c := range s.Channels {
		settled := "yes"
		if k < len(s.Identification) && !s.Identification[k].Identified() {
			settled = "NO (see note)"
		}
		fmt.Fprintf(tw, "%s\t%.1f%%\t%.1f%%\t%.2f\t%.2f\t%.1f\t%.0f%%\t%s\t\n", c.Name, 100*c.SpendShare,
			100*c.ContributionShare, c.ROI, c.MROI, c.HalfLifeWeeks, 100*c.Saturation, settled)
	}
	tw.Flush()
	printIdentification(w, s.Identification)
	f := s.Fit
	fmt.Fprintf(w, "\nin-sample R² %.3f  wMAPE %.1f%%  residual SD %s  Durbin–Watson %.2f\n", f.R2, 100*f.WMAPE, plain(f.Sigma, 4), f.DurbinWatson)
	fmt.Fprintf(w, "fit: %s; %d of %d starts converged; best SSE %s; %d evaluations; %d parameters; seed %d\n",
		f.Status, f.Converged, f.Starts, plain(f.SSE, 6), f.Evaluations, f.Parameters, s.Seed)
	printWarnings(w, s.Warnings)
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
	fmt.Fprintf(w, "\neffectiveness check, %s (every channel %s, %d of %d bootstrap refits; z against %d of %d panels simulated without any change, named when |z| > %.2f: %.0f%% family-wise false alarms):\n",
		e.Kind, e.Kind, e.Replicates, e.Tried, e.NullPanels, e.NullTried, e.ZCrit, 100*e.Alpha)
	named := 0
	for _, c := range e.Channels {
		mark := "steady"
		switch {
		case c.Changed:
			mark, named = "CHANGED", named+1
		case !c.Judged:
			mark = "not judged"
		}
		recent := ""
		if e.RecentWeeks > 0 {
			recent = fmt.Sprintf("; last %d weeks %+.0f%%", e.RecentWeeks, 100*(c.Recent-1))
		}
		fmt.Fprintf(w, "  %s %s: %s%s, z %+.1f\n", mark, c.Name, c.Words(), recent, c.Z)
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

// printIdentification writes a note line per finding of model.Identify,
// each followed by its hint.
func printIdentification(w io.Writer, ids []model.Identification) {
	first := true
	for _, id := range ids {
		if id.Identified() {
			continue
		}
		if first {
			fmt.Fprintln(w)
			first = false
		}
		for _, h := range id.Hints {
			text, hint, _ := strings.Cut(h, ": ")
			if id.ZeroEffect && strings.HasPrefix(h, "its effect") {
				text, hint = "its effect is fitted to zero", strings.TrimPrefix(h, "its effect is fitted to zero: ")
			}
			fmt.Fprintf(w, "note: %s: %s\n  hint: %s\n", id.Channel, text, hint)
		}
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

// printWarnings prints warnings of the form "text; hint: fix" as a
// warning line and, when there is one, a hint line.
func printWarnings(w io.Writer, warnings []string) {
	for _, wn := range warnings {
		text, hint, _ := strings.Cut(wn, "; hint: ")
		fmt.Fprintf(w, "warning: %s\n", text)
		if hint != "" {
			fmt.Fprintf(w, "hint: %s\n", hint)
		}
	}
}
