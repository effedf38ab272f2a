package main

import (
	"bytes"
	"cmp"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"os/signal"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"text/tabwriter"

	"github.com/urfave/cli/v2"

	"sluice/decision"
	"sluice/gate"
	"sluice/internal/atomicfile"
	"sluice/internal/boundedio"
	"sluice/internal/strictyaml"
	"sluice/model"
	"sluice/optimize"
	"sluice/policies"
	"sluice/record"
	"sluice/report"
	"sluice/uncertainty"
	"sluice/validation"
)

// DefaultDecisionDraws is the bootstrap size propose runs when no draws
// file is given: enough for stable 5% tails, small enough for a minute.
const DefaultDecisionDraws = 300

func decisionFlags() []cli.Flag {
	return append(modelFlags(),
		&cli.StringFlag{Name: "plan", Usage: "plan YAML: horizon, budget, per-channel bounds, groups, objective, margin"},
		&cli.StringFlag{Name: "policy", Value: "standard", Usage: "policy: a preset name (" + strings.Join(policies.Names(), ", ") + ") or a YAML file"},
		&cli.StringFlag{Name: "draws", Usage: "draws file from sluice bootstrap (command line only); without it a bootstrap runs here"},
		&cli.IntFlag{Name: "bootstrap-draws", Value: DefaultDecisionDraws, Usage: "replicates of the bootstrap run here when no --draws is given"},
		&cli.StringFlag{Name: "records", Usage: "directory of earlier decision records to reconcile with the data"},
		&cli.StringFlag{Name: "proposal", Usage: "gate this plan (YAML: channels: {name: weekly spend}) instead of the allocator's"},
		&cli.StringFlag{Name: "waivers", Usage: "signatures file of an earlier record whose signed waivers apply to this decision"},
		&cli.BoolFlag{Name: "quiet", Usage: "no progress bar"},
		&cli.BoolFlag{Name: "effect-choice", Value: true, Usage: "test whether each channel's effectiveness changed over the history or follows the season and, when the evidence is strong, decide with those channels drifting or seasonal (--effect-choice=false: keep the specification as given)"},
	)
}

func proposeCommand() *cli.Command {
	return &cli.Command{
		Name:  "propose",
		Usage: "allocate, gate every move by the policy and write the decision record (DIR/decision.json, DIR/report.html)",
		Flags: append(decisionFlags(),
			&cli.StringFlag{Name: "dir", Usage: "directory for decision.json, report.html, moves.csv and plan.csv (was --out)"},
			&cli.BoolFlag{Name: "replace-signed", Usage: "move an earlier signed record in DIR aside (decision.<sha>.json) instead of refusing (command line only)"},
			&cli.BoolFlag{Name: "json", Usage: "print the decision record instead of the table"},
		),
		Action: func(c *cli.Context) error {
			o, err := newOpts(c)
			if err != nil {
				return err
			}
			dir := o.String("dir")
			if dir == "" {
				return withHint(errors.New("propose needs --dir"), "pass --dir DIR; decision.json, report.html and the CSV files are written there")
			}
			// A dangerous switch: from the command line only (see config.go).
			replace := c.Bool("replace-signed")
			if err := guardSigned(dir, replace, false); err != nil {
				return err // early, before the computation; checked again at write time
			}
			in, err := loadModelInput(o)
			if err != nil {
				return err
			}
			run, err := decide(c, in, decisionArgsFrom(c, o))
			if err != nil {
				return err
			}
			path, brief, csvs, err := writeDecisionSet(dir, run, "", replace)
			if err != nil {
				return err
			}
			warnUnsignable(c.App.ErrWriter, run)
			if o.Bool("json") {
				_, err := c.App.Writer.Write(run.bytes)
				return err
			}
			printDecision(c.App.Writer, run.rec)
			fmt.Fprintf(c.App.Writer, "\nwrote %s", path)
			if brief != "" {
				fmt.Fprintf(c.App.Writer, " and %s", brief)
			}
			fmt.Fprintln(c.App.Writer)
			fmt.Fprintf(c.App.Writer, "for a spreadsheet: %s\n", strings.Join(csvs, ", "))
			return nil
		},
	}
}

// guardSigned refuses to overwrite a record that has sign-offs, unless
// asked to move it aside (move: do it now; false only checks).
func guardSigned(dir string, replace, move bool) error {
	rec := filepath.Join(dir, "decision.json")
	sigs := record.SignaturesPath(rec)
	if _, err := os.Stat(sigs); err != nil {
		return nil
	}
	if !replace {
		return withHint(fmt.Errorf("refusing to overwrite %s: it has sign-offs in %s", rec, sigs),
			"write the new decision to another --dir, or pass --replace-signed on the command line to move the signed record aside")
	}
	if !move {
		return nil
	}
	b, err := boundedio.ReadFile(rec, boundedio.MaxInput)
	if err != nil {
		return err
	}
	tag := record.SHA256Hex(b)[:12]
	if err := os.Rename(rec, filepath.Join(dir, "decision."+tag+".json")); err != nil {
		return err
	}
	return os.Rename(sigs, filepath.Join(dir, "decision."+tag+".signatures.json"))
}

// warnUnsignable says which required roles the policy pins no key for: the
// decision cannot verify until the policy lists one.
func warnUnsignable(w io.Writer, run *decisionRun) {
	var roles []string
	for _, s := range run.rec.SignoffsRequired {
		if len(run.policy.KeyEntries(s.Role)) == 0 && !slices.Contains(roles, s.Role) {
			roles = append(roles, s.Role)
		}
	}
	if len(roles) > 0 {
		fmt.Fprintf(w, "warning: policy %s pins no key for %s, which must sign this decision: it cannot be signed until the policy lists one\n",
			run.policy.Name, strings.Join(roles, ", "))
	}
}

// writeDecisionSet writes DIR/decision.json, DIR/brief.json,
// DIR/report.html and the spreadsheet files (exports.go) as one set (internal/atomicfile.WriteSet: all or
// nothing, the manifest DIR/outputs.json last). Whether a signed record is
// in the way is decided with the directory locked, just before writing.
func writeDecisionSet(dir string, run *decisionRun, title string, replaceSigned bool) (recPath, briefPath string, csvs []string, err error) {
	bd := newBriefData(run, title)
	bdBytes, err := json.MarshalIndent(bd, "", "  ")
	if err != nil {
		return "", "", nil, err
	}
	var page bytes.Buffer
	in := bd.input(run.rec, nil, nil)
	in.RecordSHA256 = bd.RecordSHA256
	if err := report.Render(&page, in); err != nil {
		return "", "", nil, err
	}
	sheets, err := decisionCSVs(run.rec)
	if err != nil {
		return "", "", nil, err
	}
	files := []atomicfile.File{
		{Name: "decision.json", Data: run.bytes, Perm: 0o644},
		{Name: "brief.json", Data: append(bdBytes, '\n'), Perm: 0o644},
		{Name: "report.html", Data: page.Bytes(), Perm: 0o644},
		{Name: movesCSV, Data: sheets[movesCSV], Perm: 0o644},
		{Name: planCSV, Data: sheets[planCSV], Perm: 0o644},
	}
	if err := writeDecisionFiles(dir, files, replaceSigned); err != nil {
		return "", "", nil, err
	}
	return filepath.Join(dir, "decision.json"), filepath.Join(dir, "report.html"),
		[]string{filepath.Join(dir, movesCSV), filepath.Join(dir, planCSV)}, nil
}

// writeDecisionFiles writes a decision's files as one set, deciding with
// DIR locked whether a signed record is in the way.
func writeDecisionFiles(dir string, files []atomicfile.File, replaceSigned bool) error {
	err := atomicfile.WriteSet(dir, files, atomicfile.SetOptions{Guard: func() error { return guardSigned(dir, replaceSigned, true) }})
	if errors.Is(err, atomicfile.ErrLocked) {
		err = withHint(err, "wait for the other run (or sign) to finish, then run again")
	}
	return err
}

// decisionRun is everything one decision computed.
type decisionRun struct {
	rec      *record.Decision
	bytes    []byte
	in       *modelInput
	draws    []model.Params // the half of the draws that judges (gate, risk, forecast)
	alloc    []model.Params // the half the allocator optimised over
	point    model.Params
	curves   *model.Curves
	econ     optimize.Economics
	gains    []float64 // of the approved plan, per draw
	backtest *validation.BacktestResult
	policy   *policies.Policy
	effect   *validation.EffectResult // the effectiveness evidence; nil when not run
}

// proposalFile is a plan a person wrote: weekly spend per channel.
type proposalFile struct {
	Channels map[string]float64 `yaml:"channels"`
}

// decisionArgs are the inputs of a decision besides the model's.
type decisionArgs struct {
	Plan, Policy, Draws, Lifts, Records, Proposal, Waivers string
	BootstrapDraws                                         int
	Quiet                                                  bool
	// NoEffectChoice keeps the model's effectiveness specification as
	// given (propose --effect-choice=false).
	NoEffectChoice bool
}

func decisionArgsFrom(c *cli.Context, o *opts) decisionArgs {
	return decisionArgs{Plan: o.String("plan"), Policy: o.String("policy"), Draws: c.String("draws"),
		Lifts: o.String("lifts"), Records: o.String("records"), Proposal: o.String("proposal"),
		Waivers: o.String("waivers"), BootstrapDraws: o.Int("bootstrap-draws"), Quiet: o.Bool("quiet"),
		NoEffectChoice: !o.Bool("effect-choice")}
}

// decide reads the decision's files and runs the one decision pipeline
// (package decision) on them.
func decide(c *cli.Context, in *modelInput, a decisionArgs) (*decisionRun, error) {
	planPath := a.Plan
	if planPath == "" {
		return nil, withHint(errors.New("propose needs --plan"), "pass --plan plan.yaml (see README, \"The plan file\")")
	}
	plan, err := optimize.LoadPlan(planPath)
	if err != nil {
		return nil, err
	}
	if err := reconcilePlan(in, plan); err != nil {
		return nil, err
	}
	pol, err := policies.Resolve(a.Policy)
	if err != nil {
		return nil, err
	}
	inputs := map[string]record.Input{"data": {Path: in.DataPath, SHA256: in.DataSHA256}}
	addInput := func(name, path string) error {
		if path == "" {
			return nil
		}
		h, err := sha256File(path)
		if err != nil {
			return err
		}
		inputs[name] = record.Input{Path: path, SHA256: h}
		return nil
	}
	if in.SpecPath != "" {
		inputs["spec"] = record.Input{Path: in.SpecPath, SHA256: in.SpecSHA256}
	}
	if in.EventsPath != "" {
		inputs["events"] = record.Input{Path: in.EventsPath, SHA256: in.EventsSHA256}
	}
	if err := addInput("plan", planPath); err != nil {
		return nil, err
	}
	policyPath := pol.Source
	if _, err := os.Stat(a.Policy); err != nil {
		policyPath = "preset:" + pol.Name
	}
	inputs["policy"] = record.Input{Path: policyPath, SHA256: record.SHA256Hex(pol.Raw)}

	// Without a draws file the pipeline runs the bootstrap itself, after
	// the effectiveness choice, so the draws are of the chosen model.
	var d *uncertainty.Draws
	var bar *replicateBar
	set := decision.Settings{Seed: in.Seed, Workers: in.Workers, EffectChoice: !a.NoEffectChoice, BootstrapDraws: a.BootstrapDraws}
	if a.Draws != "" {
		if d, err = loadDraws(in, a.Draws); err != nil {
			return nil, err
		}
		if err := addInput("draws", a.Draws); err != nil {
			return nil, err
		}
	} else if bar = progressBar(c, a.Quiet); bar != nil {
		set.Progress = func(stage string, done, total int) {
			if stage == "bootstrap" {
				bar.update(done, total)
			}
		}
	}
	di := decision.Input{Panel: in.Panel, Design: in.Design, Plan: plan, Policy: pol, Draws: d,
		MadeWith: map[string]string{"data_sha256": in.DataSHA256}}
	if in.SpecSHA256 != "" {
		di.MadeWith["spec_sha256"] = in.SpecSHA256
	}
	if path := a.Lifts; path != "" {
		if di.Lifts, err = validation.LoadLifts(path, in.Panel); err != nil {
			return nil, err
		}
		if err := addInput("lifts", path); err != nil {
			return nil, err
		}
	}
	if dir := a.Records; dir != "" {
		if di.Forecasts, err = validation.LoadForecasts(dir); err != nil {
			return nil, err
		}
	}
	if path := a.Proposal; path != "" {
		if di.Proposal, err = readProposal(path, in); err != nil {
			return nil, err
		}
		di.ProposalSource = path
		if err := addInput("proposal", path); err != nil {
			return nil, err
		}
	}
	if di.Waivers, err = signedWaivers(a.Waivers, pol); err != nil {
		return nil, err
	}
	if err := addInput("waivers", a.Waivers); err != nil {
		return nil, err
	}
	ctx, stop := signal.NotifyContext(c.Context, os.Interrupt, syscall.SIGTERM)
	defer stop()
	out, err := decision.Make(ctx, di, set)
	bar.finish()
	if err != nil {
		if ctx.Err() != nil {
			return nil, errors.New("interrupted; nothing was written")
		}
		return nil, err
	}
	if a.Draws == "" {
		for _, n := range out.Draws.Notes() {
			printNote(c.App.ErrWriter, n)
		}
	}
	if ch := out.EffectChoice; ch != nil && ch.Note != "" {
		fmt.Fprintf(c.App.ErrWriter, "note: %s\nhint: rerun sluice bootstrap with --%s %s and pass the new draws, or drop --draws so propose runs the bootstrap of the chosen model\n",
			ch.Note, ch.Preferred, strings.Join(namedChanges(ch), ","))
	}
	rec := out.Record
	rec.Version, rec.Inputs = version, inputs
	b, err := record.MarshalDecision(rec)
	if err != nil {
		return nil, err
	}
	if out.Design != nil && out.Design != in.Design {
		// The effectiveness choice switched the model: the brief reads the
		// draws with the design they were made with.
		chosen := *in
		chosen.Design, chosen.Spec = out.Design, out.Design.Spec
		in = &chosen
	}
	return &decisionRun{rec: rec, bytes: b, in: in, effect: out.Effect, draws: out.Judged, alloc: out.Allocated, point: out.Point, curves: out.Curves, econ: out.Economics,
		gains: out.Gains, backtest: out.Validation.Backtest, policy: pol}, nil
}

// readProposal reads a plan a person wrote: the current spend of every
// channel it does not name.
func readProposal(path string, in *modelInput) ([]float64, error) {
	var pf proposalFile
	if err := strictyaml.ReadFile(path, &pf); err != nil {
		return nil, err
	}
	proposed := slices.Clone(in.Design.CurrentSpend())
	for name, w := range pf.Channels {
		k := slices.Index(in.Spec.ChannelNames(), name)
		if k < 0 {
			return nil, fmt.Errorf("%s: channels.%s: not a channel of the model (%s)", path, name, strings.Join(in.Spec.ChannelNames(), ", "))
		}
		if !(w >= 0) || math.IsInf(w, 0) {
			return nil, fmt.Errorf("%s: channels.%s: weekly spend %v must be a non-negative number", path, name, w)
		}
		proposed[k] = w
	}
	return proposed, nil
}

// signedWaivers reads the waivers of an earlier record's sign-offs: only
// those whose signature is valid for a key the policy lists for the role.
func signedWaivers(path string, pol *policies.Policy) ([]gate.Waiver, error) {
	if path == "" {
		return nil, nil
	}
	sigs, err := record.ReadSignoffs(path)
	if err != nil {
		return nil, err
	}
	recPath := strings.TrimSuffix(path, ".signatures.json") + ".json"
	body, err := boundedio.ReadFile(recPath, boundedio.MaxInput)
	if err != nil {
		return nil, fmt.Errorf("%s: the signed record beside it: %w", path, err)
	}
	ring, err := record.PolicyKeyring(pol)
	if err != nil {
		return nil, err
	}
	_, ws := record.SignedRoles(body, sigs, ring)
	var out []gate.Waiver
	for _, w := range ws {
		out = append(out, gate.Waiver{Check: w.Waiver.Check, Role: w.Role})
	}
	if len(out) == 0 {
		return nil, withHint(fmt.Errorf("%s: no valid signed waiver for this policy", path), "sign with --waive CHECK --reason \"...\" using a key the policy lists")
	}
	return out, nil
}

// printDecision prints the decision table: per channel current → proposed
// → approved, the safe step and the reason; then the verdict and who signs.
func printDecision(w io.Writer, r *record.Decision) {
	fmt.Fprintf(w, "decision on next %d weeks (policy %s, seed %d); weekly spend\n", r.Horizon, r.Policy, r.Seed)
	fmt.Fprintf(w, "the allocator optimised over %d draws and the gate judged %d others (%d of %d replicates failed)\n\n",
		r.Decision.Draws.Allocated, r.Decision.Draws.Judged, r.Draws.Failed, r.Draws.Count)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "channel\tcurrent\tproposed\tapproved\tsafe step\treason")
	for _, m := range r.Moves {
		reason := "within the limits"
		if len(m.Reasons) > 0 {
			reason = m.Reasons[0]
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%.0f%%\t%s\n", m.Channel, money(m.Current), money(m.Proposed), money(m.Approved), 100*m.SafeStep, reason)
	}
	tw.Flush()
	a := r.Risk.Approved
	printEffectChoice(w, r.Effectiveness)
	fmt.Fprintf(w, "\nverdict: %s\n", strings.ToUpper(string(r.Verdict)))
	for i, why := range r.Reasons {
		if i == 3 {
			fmt.Fprintf(w, "  ... and %d more in %s\n", len(r.Reasons)-3, "decision.json")
			break
		}
		fmt.Fprintf(w, "  - %s\n", why)
	}
	fmt.Fprintf(w, "approved plan: expected gain %s over the horizon (5%%–95%%: %s to %s), probability of loss %.0f%%\n",
		signedMoney(a.ExpectedGain), signedMoney(a.P05), signedMoney(a.P95), 100*a.PLoss)
	fmt.Fprintln(w, "sign-offs required:")
	for _, s := range r.SignoffsRequired {
		fmt.Fprintf(w, "  %-18s %s (%s)\n", s.Role, s.Explanation, s.Rule)
	}
	fmt.Fprintln(w, "\n"+record.Caution)
}

// printEffectChoice prints which effectiveness specification the decision
// used and why, with each named channel's change.
func printEffectChoice(w io.Writer, ch *record.EffectChoice) {
	if ch == nil {
		return
	}
	m := ch.Model
	if len(ch.Channels) > 0 {
		m += " (" + strings.Join(ch.Channels, ", ") + ")"
	}
	fmt.Fprintf(w, "\neffectiveness: %s; %s\n", m, ch.Evidence)
	for _, c := range ch.Changes {
		if !c.Named {
			continue
		}
		what := "in the last week %+.0f%% against its history average"
		if c.Kind == model.EffectSeasonal {
			what = "over the horizon %+.0f%% against its yearly average"
		}
		fmt.Fprintf(w, "  %s: effectiveness "+what+" (90%% interval %+.0f%% to %+.0f%%; %s)\n",
			c.Channel, 100*(c.Change-1), 100*(c.Low-1), 100*(c.High-1), cmp.Or(c.Kind, model.EffectDrifting))
	}
	if ch.Note != "" {
		fmt.Fprintf(w, "  note: %s\n", ch.Note)
	}
}

// namedChanges lists the channels whose change the evidence named under
// the preferred kind.
func namedChanges(ch *record.EffectChoice) []string {
	var out []string
	for _, c := range ch.Changes {
		if c.Named && cmp.Or(c.Kind, model.EffectDrifting) == ch.Preferred {
			out = append(out, c.Channel)
		}
	}
	return out
}
