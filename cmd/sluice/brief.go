package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/urfave/cli/v2"

	"sluice/internal/atomicfile"
	"sluice/internal/boundedio"
	"sluice/internal/sample"
	"sluice/model"
	"sluice/optimize"
	"sluice/policies"
	"sluice/record"
	"sluice/report"
	"sluice/uncertainty"
)

// briefData is DIR/brief.json: the chart data of a decision's brief, kept
// beside the record so `sluice report` can render the brief again (with
// the sign-offs made since) without refitting anything.
type briefData struct {
	RecordSHA256  string                `json:"record_sha256"`
	Title         string                `json:"title,omitempty"`
	Money         *report.Money         `json:"money,omitempty"`
	Curves        []report.CurveBand    `json:"curves"`
	Gains         []float64             `json:"gains"`
	Holdout       *report.Holdout       `json:"holdout,omitempty"`
	Contributions *report.Contributions `json:"contributions,omitempty"`
	Budget        []report.BudgetPoint  `json:"budget,omitempty"`
	Effect        []report.EffectPath   `json:"effectiveness,omitempty"`
}

// input is the brief's input for rec with these sign-offs.
func (bd *briefData) input(rec *record.Decision, signed []string, sigs []report.Signature) report.Input {
	return report.Input{Record: rec, Signed: signed, Signatures: sigs, Curves: bd.Curves, Gains: bd.Gains,
		Holdout: bd.Holdout, Title: bd.Title, Money: bd.Money, Contributions: bd.Contributions, Budget: bd.Budget, Effect: bd.Effect}
}

// budgetSteps are the budget view's totals against the decision's own.
var budgetSteps = []float64{-0.10, -0.05, 0, 0.05, 0.10}

// budgetView runs the allocator at each of budgetSteps and judges its plan
// over the decision's draws with the decision's economics: the expected
// gain and its 90% band, and the allocator's budget multiplier (the net
// return of one more unit of weekly budget). Nothing here is new maths:
// optimize.Solve and optimize.Economics, as the decision itself uses them.
func budgetView(run *decisionRun, plan *optimize.Plan) []report.BudgetPoint {
	current := run.in.Design.CurrentSpend()
	var out []report.BudgetPoint
	for _, x := range budgetSteps {
		p := *plan
		switch plan.Budget.Kind {
		case optimize.BudgetTotal:
			p.Budget.Total = plan.Budget.Total * (1 + x)
		case optimize.BudgetChange:
			p.Budget.Change = (1+plan.Budget.Change)*(1+x) - 1
		default:
			p.Budget = optimize.BudgetRule{Kind: optimize.BudgetChange, Change: x}
		}
		bp := report.BudgetPoint{Change: x}
		// As in the decision: the allocator optimises over its half of the
		// draws, the other half judges its plan (no optimiser's curse).
		res, err := allocate(run.in, &p, run.alloc, run.point)
		if err != nil {
			bp.Error = err.Error()
			out = append(out, bp)
			continue
		}
		gains := run.econ.Gains(nil, run.curves, res.Proposed, current)
		q := sample.Quantiles(gains, 0.05, 0.95)
		bp.Budget, bp.ExpectedGain, bp.P05, bp.P95 = res.Spend, sample.Mean(gains), q[0], q[1]
		bp.MarginalReturn, bp.Known = res.KKT.Multiplier, res.KKT.OK
		out = append(out, bp)
	}
	return out
}

// contributions splits the full fit's weekly KPI into base and channels.
func contributions(in *modelInput, p model.Params) *report.Contributions {
	n := in.Panel.NumWeeks()
	c := &report.Contributions{Actual: in.Panel.KPI, Channels: in.Spec.ChannelNames()}
	for _, w := range in.Panel.Weeks {
		c.Weeks = append(c.Weeks, w.Format(time.DateOnly))
	}
	c.Base = in.Design.Predict(p)
	m := make([]float64, n)
	for k, cp := range p.Channels {
		in.Design.Media(m, k, cp)
		part := make([]float64, n)
		for t := range n {
			part[t] = cp.Beta * m[t]
			c.Base[t] -= part[t]
		}
		c.Media = append(c.Media, part)
	}
	return c
}

// newBriefData computes the brief's charts from a decision run.
func newBriefData(run *decisionRun, title string) *briefData {
	in := run.in
	low, high := in.Design.Support()
	vpk := run.econ.ValuePerKPI
	bd := &briefData{RecordSHA256: record.SHA256Hex(run.bytes), Title: title, Gains: run.gains,
		Money:         &report.Money{Margin: run.econ.Margin, ValuePerKPI: vpk},
		Contributions: contributions(in, run.point)}
	if pi, ok := run.rec.Inputs["plan"]; ok {
		if plan, err := optimize.LoadPlan(pi.Path); err == nil {
			bd.Money.Currency = plan.Currency
			bd.Budget = budgetView(run, plan)
		}
	}
	for k, cr := range uncertainty.ResponseBands(in.Design, run.draws, run.rec.Horizon) {
		m := run.rec.Moves[k]
		cb := report.CurveBand{Channel: cr.Name, SeenLow: low[k], SeenHigh: high[k],
			Current: m.Current, Proposed: m.Proposed, Approved: m.Approved}
		for _, p := range cr.Points {
			cb.Spend = append(cb.Spend, p.Spend)
			cb.P10 = append(cb.P10, vpk*p.P10)
			cb.P50 = append(cb.P50, vpk*p.Median)
			cb.P90 = append(cb.P90, vpk*p.P90)
		}
		bd.Curves = append(bd.Curves, cb)
	}
	bd.Effect = effectPaths(run)
	if bt := run.backtest; bt != nil && !bt.Short && len(bt.Actual) > 0 {
		h := &report.Holdout{Actual: bt.Actual, Forecast: bt.Forecast}
		first := in.Panel.NumWeeks() - len(bt.Actual)
		for i := range bt.Actual {
			h.Weeks = append(h.Weeks, in.Panel.Weeks[first+i].Format(time.DateOnly))
		}
		bd.Holdout = h
	}
	return bd
}

func reportCommand() *cli.Command {
	return &cli.Command{
		Name:  "report",
		Usage: "render the decision brief (report.html) again, showing who has signed since",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "record", Usage: "the decision record, e.g. DIR/decision.json (brief.json must lie beside it)"},
			&cli.StringFlag{Name: "policy", Usage: "policy whose keys and rules decide which sign-offs count (default: the policy file the record names)"},
			&cli.StringFlag{Name: "out", Usage: "brief to write; default report.html beside the record"},
		},
		Action: func(c *cli.Context) error {
			path := c.String("record")
			if path == "" {
				return withHint(errors.New("report needs --record"), "sluice report --record DIR/decision.json")
			}
			body, err := boundedio.ReadFile(path, boundedio.MaxInput)
			if err != nil {
				return err
			}
			rec, err := record.ParseDecision(body, path)
			if err != nil {
				return err
			}
			dir := filepath.Dir(path)
			if err := atomicfile.CheckSet(dir, filepath.Base(path), "brief.json"); err != nil {
				return withHint(err, "run sluice propose again to write a complete decision")
			}
			bd, err := readBriefData(path, body)
			if err != nil {
				return err
			}
			signed, sigs, err := signedRoles(path, body, rec, c.String("policy"))
			if err != nil {
				return err
			}
			out := c.String("out")
			in := bd.input(rec, signed, sigs)
			in.RecordSHA256 = record.SHA256Hex(body)
			if out == "" || filepath.Clean(out) == filepath.Join(dir, "report.html") {
				// The brief of the set: rewritten as part of it.
				out = filepath.Join(dir, "report.html")
				var page bytes.Buffer
				if err := report.Render(&page, in); err != nil {
					return err
				}
				if err := atomicfile.WriteSet(dir, []atomicfile.File{{Name: "report.html", Data: page.Bytes(), Perm: 0o644}},
					atomicfile.SetOptions{Keep: true}); err != nil {
					return err
				}
			} else if err := report.Write(out, in); err != nil {
				return err
			}
			fmt.Fprintf(c.App.Writer, "wrote %s (%d of %d required roles signed)\n", out, countRequired(rec, signed), len(rec.SignoffsRequired))
			return nil
		},
	}
}

// readBriefData reads the brief.json beside the record at path and checks
// that it was made for the record's bytes.
func readBriefData(path string, body []byte) (*briefData, error) {
	bp := filepath.Join(filepath.Dir(path), "brief.json")
	raw, err := boundedio.ReadFile(bp, boundedio.MaxInput)
	if err != nil {
		return nil, withHint(err, "brief.json is written by sluice propose beside decision.json")
	}
	bd, err := parseBriefData(raw, bp)
	if err != nil {
		return nil, err
	}
	if bd.RecordSHA256 != record.SHA256Hex(body) {
		return nil, fmt.Errorf("%s was made for another record than %s (the record changed after the decision)", bp, path)
	}
	return bd, nil
}

// parseBriefData decodes brief.json strictly (unknown fields refused) and
// checks that the chart data can be laid out: every curve's series as long
// as its spend grid, the holdout's series as long as its weeks.
func parseBriefData(raw []byte, source string) (*briefData, error) {
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	var bd briefData
	if err := dec.Decode(&bd); err != nil {
		return nil, fmt.Errorf("%s: %v", source, err)
	}
	if dec.More() {
		return nil, fmt.Errorf("%s: data after the JSON object", source)
	}
	for i, cb := range bd.Curves {
		n := len(cb.Spend)
		if len(cb.P10) != n || len(cb.P50) != n || len(cb.P90) != n {
			return nil, fmt.Errorf("%s: curves[%d]: spend, P10, P50 and P90 differ in length", source, i)
		}
	}
	if h := bd.Holdout; h != nil {
		n := len(h.Weeks)
		if len(h.Actual) != n || len(h.Forecast) != n || (h.Low != nil && len(h.Low) != n) || (h.High != nil && len(h.High) != n) {
			return nil, fmt.Errorf("%s: holdout: weeks and series differ in length", source)
		}
	}
	return &bd, nil
}

// signedRoles lists the roles, sorted, whose sign-offs on the record hold
// under the policy as verify judges them (valid, dated, not withdrawn), and
// those sign-offs for the brief's table: role, key fingerprint, the key's
// holder as the policy names it (its file name, or "key N of ROLE" for an
// inline key) and the time.
func signedRoles(path string, body []byte, rec *record.Decision, policy string) ([]string, []report.Signature, error) {
	sp := record.SignaturesPath(path)
	if !fileExists(sp) {
		return nil, nil, nil
	}
	sigs, err := record.ReadSignatures(sp)
	if err != nil {
		return nil, nil, err
	}
	pol, err := recordPolicy(rec, policy)
	if err != nil {
		return nil, nil, err
	}
	v := record.Verify(record.VerifyRequest{Record: body, Source: path, Signatures: sigs, Policy: pol})
	roles, rows := signoffRows(v.Signed, pol)
	return roles, rows, nil
}

// signoffRows turns the sign-offs that hold into the sorted roles they fill
// and the brief's sign-off table rows.
func signoffRows(signed []record.Signoff, pol *policies.Policy) ([]string, []report.Signature) {
	var roles []string
	var rows []report.Signature
	for _, s := range signed {
		if !slices.Contains(roles, s.Role) {
			roles = append(roles, s.Role)
		}
		who := "a key of " + s.Role + " in the policy"
		for i, e := range pol.KeyEntries(s.Role) {
			if !strings.HasPrefix(strings.TrimPrefix(e.Fingerprint, policies.FingerprintPrefix), s.KeyID) {
				continue
			}
			who = fmt.Sprintf("key %d of %s in the policy", i+1, s.Role)
			if e.Path != "" {
				who = strings.TrimSuffix(filepath.Base(e.Path), filepath.Ext(e.Path))
			}
		}
		at := ""
		if !s.SignedAt.IsZero() {
			at = s.SignedAt.UTC().Format("2006-01-02 15:04:05")
		}
		rows = append(rows, report.Signature{Role: s.Role, KeyID: s.KeyID, Signer: who, SignedAt: at})
	}
	slices.Sort(roles)
	return roles, rows
}

func countRequired(rec *record.Decision, signed []string) int {
	n := 0
	for _, s := range rec.SignoffsRequired {
		for _, r := range signed {
			if r == s.Role {
				n++
				break
			}
		}
	}
	return n
}

// effectPaths are the brief's effectiveness-over-time paths: one per
// channel the decision's model lets drift (or follow the season) by the
// effectiveness evidence.
func effectPaths(run *decisionRun) []report.EffectPath {
	ch := run.rec.Effectiveness
	if run.effect == nil || ch == nil || ch.Model == model.EffectConstant || run.effect.Kind != ch.Model {
		return nil
	}
	var weeks []string
	for _, w := range run.in.Panel.Weeks {
		weeks = append(weeks, w.Format(time.DateOnly))
	}
	var out []report.EffectPath
	for _, c := range run.effect.Channels {
		if slices.Contains(ch.Channels, c.Name) {
			ep := report.EffectPath{Channel: c.Name, Weeks: weeks, Path: c.Path, PathLow: c.PathLow, PathHigh: c.PathHigh,
				Change: c.Change, Low: c.Low, High: c.High}
			if ch.Model == model.EffectSeasonal {
				ep.SeasonWeeks = c.Horizon
			}
			out = append(out, ep)
		}
	}
	return out
}
