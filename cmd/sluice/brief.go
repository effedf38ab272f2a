package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"time"

	"github.com/urfave/cli/v2"

	"sluice/internal/atomicfile"
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
			body, err := os.ReadFile(path)
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
			signed, err := signedRoles(path, body, rec, c.String("policy"))
			if err != nil {
				return err
			}
			out := c.String("out")
			in := report.Input{Record: rec, Signed: signed, Curves: bd.Curves, Gains: bd.Gains,
				Holdout: bd.Holdout, Title: bd.Title, RecordSHA256: record.SHA256Hex(body)}
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
	raw, err := os.ReadFile(bp)
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
// under the policy as verify judges them (valid, dated, not withdrawn).
func signedRoles(path string, body []byte, rec *record.Decision, policy string) ([]string, error) {
	sp := record.SignaturesPath(path)
	if !fileExists(sp) {
		return nil, nil
	}
	sigs, err := record.ReadSignatures(sp)
	if err != nil {
		return nil, err
	}
	pol, err := recordPolicy(rec, policy)
	if err != nil {
		return nil, err
	}
	v := record.Verify(record.VerifyRequest{Record: body, Source: path, Signatures: sigs, Policy: pol})
	var roles []string
	for _, s := range v.Signed {
		if !slices.Contains(roles, s.Role) {
			roles = append(roles, s.Role)
		}
	}
	slices.Sort(roles)
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
