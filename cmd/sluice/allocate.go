package main

import (
	"errors"
	"fmt"
	"io"
	"math"
	"text/tabwriter"

	"github.com/urfave/cli/v2"

	"sluice/internal/words"
	"sluice/model"
	"sluice/optimize"
	"sluice/policies"
)

func allocateCommand() *cli.Command {
	return &cli.Command{
		Name:  "allocate",
		Usage: "propose next quarter's weekly spend per channel under the plan's constraints",
		Flags: append(modelFlags(),
			&cli.StringFlag{Name: "plan", Usage: "plan YAML: horizon, budget, per-channel bounds, groups, objective, margin"},
			&cli.StringFlag{Name: "draws", Usage: "draws file from sluice bootstrap; without it the point fit alone is used (command line only)"},
			&cli.BoolFlag{Name: "json", Usage: "print JSON instead of the table"},
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
			planPath := o.String("plan")
			if planPath == "" {
				return withHint(errors.New("allocate needs --plan"), "write a plan.yaml (see README, \"The plan file\") and pass --plan plan.yaml")
			}
			plan, err := optimize.LoadPlan(planPath)
			if err != nil {
				return err
			}
			if err := reconcilePlan(in, plan); err != nil {
				return err
			}
			var draws []model.Params
			var point model.Params
			source := "the point fit only (no --draws given)"
			if path := c.String("draws"); path != "" {
				d, err := loadDraws(in, path)
				if err != nil {
					return err
				}
				draws, point = d.Params(), fullFitParams(d)
				source = fmt.Sprintf("%d bootstrap draws of %s", len(draws), path)
			} else {
				fr, err := in.Design.Fit(in.Panel.KPI, model.FitSettings{Seed: in.Seed, Workers: in.Workers})
				if err != nil {
					return err
				}
				point = fr.Params
				draws = []model.Params{point}
			}
			res, err := allocate(in, plan, draws, point)
			if err != nil {
				return err
			}
			out := newAllocateOutput(in, res, source, plan.HorizonWeeks)
			if out.Warnings, err = supportWarnings(in, out.Channels); err != nil {
				return err
			}
			out.Warnings = append(out.Warnings, darkWarnings(plan, out.Channels)...)
			if o.Bool("json") {
				return printJSON(c.App.Writer, out)
			}
			printAllocation(c.App.Writer, out)
			return nil
		},
	}
}

// allocate solves the plan over the draws, with the point fit's optimum
// among the starts.
func allocate(in *modelInput, plan *optimize.Plan, draws []model.Params, point model.Params) (*optimize.Result, error) {
	prob, err := plan.Resolve(in.Spec.ChannelNames(), in.Design.CurrentSpend())
	if err != nil {
		return nil, err
	}
	h := plan.HorizonWeeks
	prob.Response = in.Design.NewCurves(draws, h)
	prob.Point = in.Design.NewCurves([]model.Params{point}, h)
	return optimize.Solve(*prob, &optimize.Settings{Seed: in.Seed, Workers: in.Workers})
}

// allocateOutput is `sluice allocate --json`.
type allocateOutput struct {
	Tool         string             `json:"tool"`
	Version      string             `json:"version"`
	Seed         uint64             `json:"seed"`
	Source       string             `json:"draws"`
	Objective    string             `json:"objective"`
	Budget       float64            `json:"budget"` // total spend over the horizon
	Horizon      int                `json:"horizon_weeks"`
	ExpectedGain float64            `json:"expected_gain"`
	Channels     []allocatedChannel `json:"channels"`
	MROIUnit     string             `json:"mroi_unit"` // what mroi_current and mroi_proposed count
	KKT          kktOutput          `json:"kkt"`
	Starts       int                `json:"starts"`
	Agreed       int                `json:"starts_agreed"`
	Status       string             `json:"status"`
	// Warnings name each channel the proposal takes outside the spend the
	// data has seen, as propose's support guard would hold it.
	Warnings []string `json:"warnings,omitempty"`
}

// darkWarnings names each channel whose current spend is 0 (a flighted
// channel dark through the last weeks, or one not yet launched) while the
// plan bounds it by max_change: a change relative to 0 keeps it at 0, so
// the allocator cannot move it whatever its marginal ROI.
func darkWarnings(plan *optimize.Plan, chans []allocatedChannel) []string {
	var out []string
	for _, c := range chans {
		cp, ok := plan.Channels[c.Name]
		if ok && c.Current == 0 && !math.IsInf(cp.MaxChange, 1) && !cp.Locked {
			out = append(out, fmt.Sprintf("%s: current spend is 0 (no spend in the last %d weeks), so max_change %g keeps it at 0 whatever it returns; hint: bound it with min and max in %s instead, or give its current spend",
				c.Name, model.CurrentWeeks, cp.MaxChange, plan.Locate("channels."+c.Name)))
		}
	}
	return out
}

// supportWarnings says, per channel, when the proposal leaves the support
// guard's range of the default policy (the one propose uses without
// --policy): from low_multiple × the lowest to high_multiple × the highest
// 4-week average spend in the data (model.Design.Support). A move towards
// current spend is never warned about: the guard allows current spend.
func supportWarnings(in *modelInput, chans []allocatedChannel) ([]string, error) {
	pol, err := policies.Resolve("standard")
	if err != nil {
		return nil, err
	}
	low, high := in.Design.Support()
	var out []string
	for k, c := range chans {
		lo := min(pol.Support.LowMultiple*low[k], c.Current)
		hi := max(pol.Support.HighMultiple*high[k], c.Current)
		switch {
		case c.Proposed > hi:
			out = append(out, fmt.Sprintf("%s: proposed %s/week is above the %s/week the data supports (%g × its highest 4-week average %s); propose under the standard policy would hold it there; hint: widen max in the plan only with an experiment to learn from",
				c.Name, money(c.Proposed), money(hi), pol.Support.HighMultiple, money(high[k])))
		case c.Proposed < lo:
			out = append(out, fmt.Sprintf("%s: proposed %s/week is below the %s/week the data supports (%g × its lowest 4-week average %s); propose under the standard policy would hold it there; hint: set min in the plan to keep the channel within what was seen",
				c.Name, money(c.Proposed), money(lo), pol.Support.LowMultiple, money(low[k])))
		}
	}
	return out, nil
}

type allocatedChannel struct {
	Name         string  `json:"name"`
	Current      float64 `json:"current"`
	Proposed     float64 `json:"proposed"`
	Change       float64 `json:"change"`
	MROICurrent  float64 `json:"mroi_current"`
	MROIProposed float64 `json:"mroi_proposed"`
}

type kktOutput struct {
	OK           bool    `json:"ok"`
	MaxViolation float64 `json:"max_violation"`
	Multiplier   float64 `json:"multiplier"`
	Detail       string  `json:"detail"`
}

func newAllocateOutput(in *modelInput, r *optimize.Result, source string, horizon int) allocateOutput {
	out := allocateOutput{Tool: "sluice", Version: version, Seed: in.Seed, Source: source, Horizon: horizon,
		Objective: r.Objective.String(), Budget: r.Spend, ExpectedGain: r.ExpectedGain,
		KKT:    kktOutput{OK: r.KKT.OK, MaxViolation: r.KKT.MaxViolation, Multiplier: r.KKT.Multiplier, Detail: r.KKT.Detail},
		Starts: len(r.Starts), Agreed: r.Agreed, Status: r.Status.String(),
		MROIUnit: "profit per currency at the margin (break-even 1)"}
	for _, c := range r.Channels {
		out.Channels = append(out.Channels, allocatedChannel{Name: c.Name, Current: c.Current, Proposed: c.Proposed,
			Change: c.Change, MROICurrent: c.MROICurrent, MROIProposed: c.MROIProposed})
	}
	return out
}

func printAllocation(w io.Writer, a allocateOutput) {
	fmt.Fprintf(w, "proposal over %s; objective %s; weekly spend and marginal ROI (profit per currency at the margin; break-even 1)\n\n", a.Source, a.Objective)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "channel\tcurrent\tproposed\tchange\tmROI now\tmROI proposed\t")
	for _, c := range a.Channels {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%.2f\t%.2f\t\n", c.Name, money(c.Current), money(c.Proposed), signedMoney(c.Change), c.MROICurrent, c.MROIProposed)
	}
	tw.Flush()
	fmt.Fprintf(w, "\nbudget %s over %d weeks; expected gain %s against the status quo\n", money(a.Budget), a.Horizon, signedMoney(a.ExpectedGain))
	ok := "holds"
	if !a.KKT.OK {
		ok = "FAILS"
	}
	fmt.Fprintf(w, "optimality check %s (largest violation %s): %s; %d of %d starts agreed; %s\n", ok, plain(a.KKT.MaxViolation, 2), a.KKT.Detail, a.Agreed, a.Starts, a.Status)
	printWarnings(w, a.Warnings)
	fmt.Fprintln(w, "this is a proposal: `sluice propose` sizes each move to what the evidence supports")
}

func money(v float64) string       { return words.Thousands(v) }
func signedMoney(v float64) string { return words.Signed(v) }
