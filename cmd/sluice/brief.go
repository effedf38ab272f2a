package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"path/filepath"
	"time"

	"github.com/urfave/cli/v2"

	"sluice/internal/boundedio"
	"sluice/policies"
	"sluice/record"
	"sluice/report"
	"sluice/uncertainty"
)

// briefData is DIR/brief.json: the chart data of a decision's brief, kept
// beside the record so `sluice report` can render the brief again (with
// the sign-offs made since) without refitting anything.
type briefData struct {
	RecordSHA256 string             `json:"record_sha256"`
	Title        string             `json:"title,omitempty"`
	Curves       []report.CurveBand `json:"curves"`
	Gains        []float64          `json:"gains"`
	Holdout      *report.Holdout    `json:"holdout,omitempty"`
}

// newBriefData computes the brief's charts from a decision run.
func newBriefData(run *decisionRun, title string) *briefData {
	in := run.in
	low, high := in.Design.Support()
	vpk := run.econ.ValuePerKPI
	bd := &briefData{RecordSHA256: record.SHA256Hex(run.bytes), Title: title, Gains: run.gains}
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

// writeBrief writes DIR/brief.json and DIR/report.html for a fresh
// decision (nobody has signed yet) and returns the brief's path.
func writeBrief(dir string, run *decisionRun, title string) (string, error) {
	bd := newBriefData(run, title)
	if err := writeJSON(filepath.Join(dir, "brief.json"), bd); err != nil {
		return "", err
	}
	path := filepath.Join(dir, "report.html")
	return path, report.Write(path, report.Input{Record: run.rec, Curves: bd.Curves, Gains: bd.Gains,
		Holdout: bd.Holdout, Title: title})
}

func reportCommand() *cli.Command {
	return &cli.Command{
		Name:  "report",
		Usage: "render the decision brief (report.html) again, showing who has signed since",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "record", Usage: "the decision record, e.g. DIR/decision.json (brief.json must lie beside it)"},
			&cli.StringFlag{Name: "policy", Usage: "policy whose keys decide which signatures count (default: show every role with a valid-looking envelope)"},
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
			raw, err := boundedio.ReadFile(filepath.Join(dir, "brief.json"), boundedio.MaxInput)
			if err != nil {
				return withHint(err, "brief.json is written by sluice propose beside decision.json")
			}
			var bd briefData
			if err := json.Unmarshal(raw, &bd); err != nil {
				return fmt.Errorf("%s: %v", filepath.Join(dir, "brief.json"), err)
			}
			if bd.RecordSHA256 != record.SHA256Hex(body) {
				return fmt.Errorf("%s was made for another record than %s (the record changed after the decision)", filepath.Join(dir, "brief.json"), path)
			}
			signed, err := signedRoles(path, body, c.String("policy"))
			if err != nil {
				return err
			}
			out := c.String("out")
			if out == "" {
				out = filepath.Join(dir, "report.html")
			}
			if err := report.Write(out, report.Input{Record: rec, Signed: signed, Curves: bd.Curves, Gains: bd.Gains,
				Holdout: bd.Holdout, Title: bd.Title}); err != nil {
				return err
			}
			fmt.Fprintf(c.App.Writer, "wrote %s (%d of %d required roles signed)\n", out, countRequired(rec, signed), len(rec.SignoffsRequired))
			return nil
		},
	}
}

// signedRoles lists the roles whose signatures on the record are valid for
// the policy's keys.
func signedRoles(path string, body []byte, policy string) ([]string, error) {
	sp := record.SignaturesPath(path)
	if !fileExists(sp) || policy == "" {
		return nil, nil
	}
	sigs, err := record.ReadSignoffs(sp)
	if err != nil {
		return nil, err
	}
	pol, err := policies.Resolve(policy)
	if err != nil {
		return nil, err
	}
	ring, err := record.PolicyKeyring(pol)
	if err != nil {
		return nil, err
	}
	roles, _ := record.SignedRoles(body, sigs, ring)
	return roles, nil
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
