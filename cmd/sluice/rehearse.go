package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"maps"
	"os"
	"os/signal"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"text/tabwriter"
	"time"

	"github.com/urfave/cli/v2"

	"sluice/internal/boundedio"
	"sluice/optimize"
	"sluice/policies"
	"sluice/rehearsal"
	"sluice/report"
	"sluice/uncertainty"
)

func rehearseCommand() *cli.Command {
	kinds := make([]string, len(rehearsal.AllKinds))
	for i, k := range rehearsal.AllKinds {
		kinds[i] = string(k)
	}
	return &cli.Command{
		Name:  "rehearse",
		Usage: "run the whole decision on simulated worlds built from the data, some where the model is wrong, and score each policy by its TRUE gain",
		Description: "Each world takes its parameters from a bootstrap draw of the fit to the data, the real spend history and\n" +
			"moving-block resampled residuals of the real fit; a share of worlds (--misspecified) breaks one assumption:\n" +
			strings.Join(kinds, ", ") + ". World i depends only on --seed and i.",
		Flags: append(modelFlags(),
			&cli.StringFlag{Name: "plan", Usage: "plan YAML: horizon, budget, per-channel bounds, groups, objective, margin"},
			&cli.StringSliceFlag{Name: "policy", Usage: "policy to rehearse: a preset name (" + strings.Join(policies.Names(), ", ") + ") or a YAML file; repeatable (default standard)"},
			&cli.IntFlag{Name: "worlds", Value: 200, Usage: "simulated worlds"},
			&cli.Float64Flag{Name: "misspecified", Value: 0.5, Usage: "share of worlds that break an assumption of the model"},
			&cli.StringFlag{Name: "kinds", Value: strings.Join(kinds, ","), Usage: "comma-separated kinds of misspecified world to draw from"},
			&cli.IntFlag{Name: "base-draws", Value: 100, Usage: "bootstrap replicates of the data that worlds take their parameters from"},
			&cli.IntFlag{Name: "world-draws", Value: 60, Usage: "bootstrap replicates of each world's decision"},
			&cli.IntFlag{Name: "world-replicates", Value: 8, Usage: "recovery-check panels of each world's validation"},
			&cli.StringFlag{Name: "dir", Usage: "also write, into this directory (was --out), rehearsal.json (every world's outcome: kind, failed checks, each plan's true gain and verdict) and rehearsal.html (the page for reading)"},
			&cli.StringFlag{Name: "shard", Value: "1/1", Usage: "run only shard K of N: worlds i with i % N == K-1 (combine with sluice rehearse-merge)"},
			&cli.BoolFlag{Name: "json", Usage: "print JSON instead of the table"},
			&cli.BoolFlag{Name: "quiet", Usage: "no progress line"},
			&cli.BoolFlag{Name: "effect-choice", Value: true, Usage: "each world's decision runs propose's effectiveness choice, as propose does by default (--effect-choice=false: constant effectiveness as given)"},
		),
		Action: func(c *cli.Context) error {
			o, err := newOpts(c)
			if err != nil {
				return err
			}
			shard, err := uncertainty.ParseShard(o.String("shard"))
			if err != nil {
				return withHint(err, "e.g. --shard 2/8 for the second of eight jobs")
			}
			planPath := o.String("plan")
			if planPath == "" {
				return withHint(errors.New("rehearse needs --plan"), "pass --plan plan.yaml (see README, \"The plan file\")")
			}
			plan, err := optimize.LoadPlan(planPath)
			if err != nil {
				return err
			}
			names := c.StringSlice("policy")
			if len(names) == 0 && o.fromConfig("policy") {
				names = o.List("policy")
			}
			if len(names) == 0 {
				names = []string{"standard"}
			}
			var pols []*policies.Policy
			for _, n := range names {
				p, err := policies.Resolve(n)
				if err != nil {
					return err
				}
				pols = append(pols, p)
			}
			var ks []rehearsal.Kind
			for _, k := range o.List("kinds") {
				if !slices.Contains(kinds, k) {
					return withHint(fmt.Errorf("--kinds: %q is not a kind of world", k), "kinds are %s", strings.Join(kinds, ", "))
				}
				ks = append(ks, rehearsal.Kind(k))
			}
			if len(ks) == 0 && o.Float("misspecified") > 0 {
				return withHint(errors.New("--kinds is empty"), "name at least one kind, or pass --misspecified 0")
			}
			if o.Int("worlds") < 1 {
				return fmt.Errorf("--worlds %d must be at least 1", o.Int("worlds"))
			}
			in, err := loadModelInput(o)
			if err != nil {
				return err
			}
			if err := reconcilePlan(in, plan); err != nil {
				return err
			}
			ctx, stop := signal.NotifyContext(c.Context, os.Interrupt, syscall.SIGTERM)
			defer stop()
			set := rehearsal.Settings{Seed: in.Seed, Worlds: o.Int("worlds"), Misspecified: o.Float("misspecified"), Kinds: ks,
				BaseDraws: o.Int("base-draws"), WorldDraws: o.Int("world-draws"), Replicates: o.Int("world-replicates"), Workers: in.Workers,
				Shard: shard, EffectChoice: o.Bool("effect-choice")}
			start := time.Now()
			if !o.Bool("quiet") {
				set.Progress = func(done, total int) {
					fmt.Fprintf(c.App.ErrWriter, "\rworld %d of %d (%.1f s per world)", done, total, time.Since(start).Seconds()/float64(done))
					if done == total {
						fmt.Fprintln(c.App.ErrWriter)
					}
				}
			}
			// With --lifts (a model flag), each world gets the same tests
			// (windows, standard errors) with results simulated from its truth.
			prob := rehearsal.Problem{Panel: in.Panel, Design: in.Design, Plan: plan, Policies: pols, Lifts: in.Lifts}
			r, err := rehearsal.Run(ctx, prob, set)
			if err != nil {
				return err
			}
			out := rehearseOutput{Tool: "sluice", Version: version, Seed: r.Seed, Worlds: len(r.Worlds), WorldsTotal: set.Worlds,
				Shard: shard.String(), Misspecified: set.Misspecified, Kinds: ks, Sizes: r.Sizes, Policies: r.Policies, Raw: r.Raw,
				FailedShare: r.FailedShare, Errors: r.Errors, Decided: r.Decided, Failures: r.Failures, Checks: r.Checks, Drifting: r.Drifting,
				Effect: r.Effect, DriftDrawn: r.DriftDrawn}
			return emitRehearsal(c, o, out, r, time.Since(start))
		},
	}
}

// emitRehearsal writes DIR/rehearsal.json and DIR/rehearsal.html (with
// --out) and prints the table or, with --json, the summary.
func emitRehearsal(c *cli.Context, o *opts, out rehearseOutput, r *rehearsal.Result, took time.Duration) error {
	out = out.withWarning(r)
	if r.Decided == 0 {
		printFailures(c.App.ErrWriter, out)
		return withHint(fmt.Errorf("no world was decided: all %d failed; nothing was written", r.Errors),
			"the reasons by stage are above; a world fails where propose on the same data would, so try sluice propose on it")
	}
	var wrote []string
	if dir := o.String("dir"); dir != "" {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			return fmt.Errorf("--dir: %w", err)
		}
		jsonPath, htmlPath := filepath.Join(dir, "rehearsal.json"), filepath.Join(dir, "rehearsal.html")
		if err := writeJSON(jsonPath, rehearseFile{out, r.Worlds}); err != nil {
			return err
		}
		if err := report.WriteRehearsal(htmlPath, r); err != nil {
			return err
		}
		wrote = []string{jsonPath, htmlPath}
	}
	// With --json, stdout is the JSON alone; the paths go to stderr.
	pathsTo := c.App.Writer
	if o.Bool("json") {
		pathsTo = c.App.ErrWriter
	}
	defer func() {
		for _, p := range wrote {
			fmt.Fprintln(pathsTo, "wrote", p)
		}
	}()
	if o.Bool("json") {
		return printJSON(c.App.Writer, out)
	}
	printRehearsal(c.App.Writer, out, took)
	return nil
}

// rehearseFile is DIR/rehearsal.json: the summary and every world.
type rehearseFile struct {
	rehearseOutput
	Outcomes []rehearsal.Outcome `json:"outcomes"`
}

func rehearseMergeCommand() *cli.Command {
	return &cli.Command{
		Name:      "rehearse-merge",
		Usage:     "combine rehearsal shards (DIR/rehearsal.json of each --shard K/N run) into the result of one run",
		ArgsUsage: "SHARD.json...",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "dir", Usage: "directory for the merged rehearsal.json and rehearsal.html (was --out)"},
			&cli.BoolFlag{Name: "json", Usage: "print JSON instead of the table"},
		},
		Action: func(c *cli.Context) error {
			o, err := newOpts(c)
			if err != nil {
				return err
			}
			if c.NArg() == 0 {
				return withHint(errors.New("rehearse-merge needs the shards' rehearsal.json files"), "sluice rehearse-merge --dir DIR part1/rehearsal.json part2/rehearsal.json")
			}
			var first *rehearseFile
			var parts [][]rehearsal.Outcome
			shards := 0 // the N of the shards K/N when all share it
			for _, path := range c.Args().Slice() {
				b, err := boundedio.ReadFile(path, boundedio.MaxDraws) // about 4.5 KB per world
				if err != nil {
					return err
				}
				f, err := decodeRehearsalFile(b)
				if err != nil {
					return withHint(fmt.Errorf("%s: %v", path, err), "give the rehearsal.json that sluice rehearse --dir wrote, as it was written")
				}
				if first == nil {
					first = &f
				} else if msg := sameRehearsal(first.rehearseOutput, f.rehearseOutput); msg != "" {
					return fmt.Errorf("%s is not a shard of the same rehearsal as %s: %s", path, c.Args().First(), msg)
				}
				parts = append(parts, f.Outcomes)
				if sh, err := uncertainty.ParseShard(f.Shard); err == nil && (len(parts) == 1 || sh.N == shards) {
					shards = sh.N
				} else {
					shards = -1
				}
			}
			names := make([]string, len(first.Policies))
			for j, p := range first.Policies {
				names[j] = p.Name
			}
			r, err := rehearsal.Merge(first.Seed, first.Sizes, names, first.WorldsTotal, max(shards, 0), parts)
			if err != nil {
				return err
			}
			out := first.rehearseOutput
			out.Worlds, out.Shard = len(r.Worlds), "1/1"
			out.Policies, out.Raw, out.FailedShare, out.Errors = r.Policies, r.Raw, r.FailedShare, r.Errors
			out.Decided, out.Failures, out.Checks, out.Drifting = r.Decided, r.Failures, r.Checks, r.Drifting
			out.Effect, out.DriftDrawn = r.Effect, r.DriftDrawn
			return emitRehearsal(c, o, out, r, 0)
		},
	}
}

// decodeRehearsalFile reads a rehearsal.json strictly: a field this
// version does not write, or anything after the object, is an error.
func decodeRehearsalFile(b []byte) (rehearseFile, error) {
	var f rehearseFile
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&f); err != nil {
		return rehearseFile{}, err
	}
	if dec.More() {
		return rehearseFile{}, errors.New("data after the rehearsal's JSON object")
	}
	return f, nil
}

// sameRehearsal says how two shards' settings differ ("" when they match).
func sameRehearsal(a, b rehearseOutput) string {
	switch {
	case a.Seed != b.Seed:
		return fmt.Sprintf("seed %d, not %d", b.Seed, a.Seed)
	case a.WorldsTotal != b.WorldsTotal:
		return fmt.Sprintf("%d worlds in all, not %d", b.WorldsTotal, a.WorldsTotal)
	case fmt.Sprint(a.Sizes) != fmt.Sprint(b.Sizes) || a.Misspecified != b.Misspecified || fmt.Sprint(a.Kinds) != fmt.Sprint(b.Kinds):
		return "other sizes, misspecified share or kinds"
	case len(a.Policies) != len(b.Policies):
		return "other policies"
	}
	for j := range a.Policies {
		if a.Policies[j].Name != b.Policies[j].Name {
			return "other policies"
		}
	}
	return ""
}

// rehearseOutput is `sluice rehearse --json`.
type rehearseOutput struct {
	Tool         string                     `json:"tool"`
	Version      string                     `json:"version"`
	Seed         uint64                     `json:"seed"`
	Worlds       int                        `json:"worlds"`       // in this file
	WorldsTotal  int                        `json:"worlds_total"` // of the whole run, all shards
	Shard        string                     `json:"shard"`
	Misspecified float64                    `json:"misspecified"`
	Kinds        []rehearsal.Kind           `json:"kinds"`
	Sizes        rehearsal.Sizes            `json:"sizes"`
	Policies     []rehearsal.Summary        `json:"policies"`
	Raw          rehearsal.Summary          `json:"raw"`
	FailedShare  map[rehearsal.Kind]float64 `json:"failed_check_share"`
	Errors       int                        `json:"worlds_failed"`
	Decided      int                        `json:"worlds_decided"`
	Failures     []rehearsal.Failure        `json:"failures"`
	Checks       []rehearsal.CheckRate      `json:"checks"`
	// Drifting counts, per world kind, the worlds whose decision let a
	// channel's effectiveness vary (drifting or seasonal) by the
	// effectiveness choice.
	Drifting map[rehearsal.Kind]int `json:"effect_drifting,omitempty"`
	// Effect compares, per kind of world, each way of deciding with and
	// without the effectiveness choice (rehearsal.Result.Effect).
	Effect []rehearsal.EffectComparison `json:"with_without_effect,omitempty"`
	// DriftDrawn says what the drift worlds drew.
	DriftDrawn *rehearsal.DriftDrawn `json:"drift_drawn,omitempty"`
	// Warning is set when more than a tenth of the worlds failed.
	Warning string `json:"warning,omitempty"`
}

// withWarning sets out.Warning from r.
func (out rehearseOutput) withWarning(r *rehearsal.Result) rehearseOutput {
	if r.Loud() {
		out.Warning = fmt.Sprintf("%d of %d worlds could not be decided (more than %.0f%%); the figures cover only the %d that could",
			r.Errors, r.Errors+r.Decided, 100*rehearsal.LoudShare, r.Decided)
	}
	return out
}

func printRehearsal(w io.Writer, r rehearseOutput, took time.Duration) {
	fmt.Fprintf(w, "rehearsal on %d worlds (seed %d, %.0f%% misspecified); true gain over the next %d weeks against the status quo\n",
		r.Worlds, r.Seed, 100*r.Misspecified, r.Sizes.Horizon)
	fmt.Fprintf(w, "sizes: %d bootstrap draws of the data for the worlds; per world %d draws and %d recovery panels; %.1f s per world\n\n",
		r.Sizes.BaseDraws, r.Sizes.WorldDraws, r.Sizes.Replicates, took.Seconds()/float64(max(r.Worlds, 1)))
	if len(r.Sizes.Shrunk) > 0 {
		fmt.Fprintf(w, "smaller than propose's own decision: %s\n", strings.Join(r.Sizes.Shrunk, "; "))
	}
	if r.Sizes.EffectChoice {
		var parts []string
		for _, k := range slices.Sorted(maps.Keys(r.Drifting)) {
			parts = append(parts, fmt.Sprintf("%s %d", k, r.Drifting[k]))
		}
		if len(parts) == 0 {
			parts = []string{"none"}
		}
		fmt.Fprintf(w, "effectiveness choice (as propose runs it): worlds decided with a varying effectiveness, by kind: %s\n", strings.Join(parts, ", "))
	}
	if d := r.DriftDrawn; d != nil {
		fmt.Fprintf(w, "drift worlds drew: %d rising, %d falling (end of history over start ×%.2f to ×%.2f), %d of %d ramped over the last third only\n",
			d.Rising, d.Falling, d.Min, d.Max, d.LastThird, d.Worlds)
	}
	if r.Errors > 0 && float64(r.Errors) > rehearsal.LoudShare*float64(r.Errors+r.Decided) {
		fmt.Fprintf(w, "WARNING: %d of %d worlds could not be decided (see below)\n", r.Errors, r.Errors+r.Decided)
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "decided by\tworlds\tP(loss)\tmean gain\t5% gain\tof oracle\trefused\t")
	row := func(name string, s rehearsal.Summary) {
		fmt.Fprintf(tw, "%s\t%d\t%.0f%%\t%s\t%s\t%.0f%%\t%.0f%%\t\n", name, s.Worlds, 100*s.PLoss, signedMoney(s.MeanGain),
			signedMoney(s.P05Gain), 100*s.OracleShare, 100*s.Refused)
	}
	row("raw proposal", r.Raw)
	for _, p := range r.Policies {
		row("policy "+p.Name, p)
	}
	tw.Flush()
	fmt.Fprintln(w, "\nby kind of world: P(loss) and share of oracle gain")
	tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprint(tw, "kind\tworlds\tfailed checks\traw\t")
	for _, p := range r.Policies {
		fmt.Fprintf(tw, "%s\t", p.Name)
	}
	fmt.Fprintln(tw)
	kinds := append([]rehearsal.Kind{rehearsal.WellSpecified}, rehearsal.AllKinds...)
	for _, k := range kinds {
		raw := r.Raw.ByWorldKind[k]
		if raw == nil {
			continue
		}
		fmt.Fprintf(tw, "%s\t%d\t%.0f%%\t%s\t", k, raw.Worlds, 100*r.FailedShare[k], lossShare(raw))
		for _, p := range r.Policies {
			fmt.Fprintf(tw, "%s\t", lossShare(p.ByWorldKind[k]))
		}
		fmt.Fprintln(tw)
	}
	tw.Flush()
	printWithWithout(w, r)
	printCheckRates(w, r)
	printFailures(w, r)
	fmt.Fprintln(w, "\nthe worlds are simulated from this model's family and a few named departures from it; a rehearsal shows how the policy behaves there, not in the real market")
}

// printWithWithout prints, per kind of world, each way of deciding with and
// without the effectiveness choice.
func printWithWithout(w io.Writer, r rehearseOutput) {
	if len(r.Effect) == 0 {
		return
	}
	fmt.Fprintln(w, "\nwith and without the effectiveness choice: P(loss) and share of oracle gain; where the choice kept the")
	fmt.Fprintln(w, "constant model the world's decision is one and counts on both sides, where it switched the world was decided again without it")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprint(tw, "kind\tworlds\tswitched (on the affected channel)\t")
	for _, d := range r.Effect[0].Deciders {
		fmt.Fprintf(tw, "%s with\t%s without\t", d.Name, d.Name)
	}
	fmt.Fprintln(tw)
	for _, c := range r.Effect {
		fmt.Fprintf(tw, "%s\t%d\t%d (%d)\t", c.Kind, c.Worlds, c.Switched, c.OnAffected)
		for _, d := range c.Deciders {
			fmt.Fprintf(tw, "%s\t%s\t", lossShare(&d.With), lossShare(&d.Without))
		}
		fmt.Fprintln(tw)
	}
	tw.Flush()
}

// printCheckRates prints each check's stated and realised false-alarm rate
// and its power per misspecified kind.
func printCheckRates(w io.Writer, r rehearseOutput) {
	if len(r.Checks) == 0 {
		return
	}
	var kinds []rehearsal.Kind
	for _, k := range rehearsal.AllKinds {
		for _, c := range r.Checks {
			if _, ok := c.Power[k]; ok {
				kinds = append(kinds, k)
				break
			}
		}
	}
	fmt.Fprintln(w, "\nchecks: stated false-alarm rate, realised in well-specified worlds, share not judged there (a channel fitted to zero),")
	fmt.Fprintln(w, "and power (fired on the affected channel) per kind")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprint(tw, "check\tstated\trealised\tnot judged\t")
	for _, k := range kinds {
		fmt.Fprintf(tw, "%s\t", k)
	}
	fmt.Fprintln(tw)
	for _, c := range r.Checks {
		stated := "not a test"
		if c.Stated > 0 {
			stated = fmt.Sprintf("%.1f%%", 100*c.Stated)
		}
		real := "-"
		if c.Worlds > 0 {
			real = fmt.Sprintf("%.1f%%", 100*c.FalseAlarm)
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%.1f%%\t", c.Name, stated, real, 100*c.Untested)
		for _, k := range kinds {
			if v, ok := c.Power[k]; ok {
				fmt.Fprintf(tw, "%.0f%%\t", 100*v)
			} else {
				fmt.Fprint(tw, "-\t")
			}
		}
		fmt.Fprintln(tw)
	}
	tw.Flush()
}

// printFailures says how many worlds failed, by stage with the first
// reasons, and loudly when more than a tenth did.
func printFailures(w io.Writer, r rehearseOutput) {
	if r.Errors == 0 {
		return
	}
	n := r.Errors + r.Decided
	if r.Decided > 0 && float64(r.Errors) > rehearsal.LoudShare*float64(n) {
		fmt.Fprintf(w, "\nWARNING: %d of %d worlds (%.0f%%) could not be decided; the figures cover only the %d that could, which may not be like the others\n",
			r.Errors, n, 100*float64(r.Errors)/float64(n), r.Decided)
	}
	fmt.Fprintf(w, "\n%d of %d worlds could not be decided and are left out of every figure; by stage:\n", r.Errors, n)
	for _, f := range r.Failures {
		fmt.Fprintf(w, "  %s: %d\n", f.Stage, f.Worlds)
		for _, why := range f.Reasons {
			fmt.Fprintf(w, "    %s\n", why)
		}
	}
}

func lossShare(s *rehearsal.Summary) string {
	if s == nil {
		return "-"
	}
	return fmt.Sprintf("%.0f%% / %.0f%%", 100*s.PLoss, 100*s.OracleShare)
}
