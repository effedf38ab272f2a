package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"github.com/urfave/cli/v2"

	"sluice/gate"
	"sluice/internal/atomicfile"
	"sluice/policies"
	"sluice/record"
	"sluice/report"
)

// errNotVerified is the exit status of a record that does not verify.
var errNotVerified = cli.Exit("", 3)

// verifyInputs are the inputs a record names that verify can be pointed at.
var verifyInputs = []string{"data", "spec", "plan", "lifts", "draws", "waivers", "proposal"}

func verifyCommand() *cli.Command {
	flags := []cli.Flag{
		&cli.StringFlag{Name: "record", Usage: "the decision record, e.g. DIR/decision.json"},
		&cli.StringFlag{Name: "policy", Usage: "your own copy of the policy the decision must meet (preset name or YAML file); never taken from the record"},
		&cli.StringFlag{Name: "brief", Usage: "also check that this brief (report.html) was rendered from the record"},
		&cli.BoolFlag{Name: "json", Usage: "print what was checked and found as JSON on stdout (the exit status is the same)"},
	}
	for _, n := range verifyInputs {
		flags = append(flags, &cli.StringFlag{Name: n, Usage: "check this " + n + " file instead of the path the record names"})
	}
	return &cli.Command{
		Name:  "verify",
		Usage: "check that a decision record, its inputs and its brief are unchanged and signed as its policy requires",
		Flags: flags,
		Action: func(c *cli.Context) error {
			path, polArg := c.String("record"), c.String("policy")
			if path == "" || polArg == "" {
				return withHint(errors.New("verify needs --record and --policy"), "sluice verify --record DIR/decision.json --policy policy.yaml")
			}
			body, err := os.ReadFile(path)
			if err != nil {
				return err
			}
			pol, err := policies.Resolve(polArg)
			if err != nil {
				return err
			}
			var sigs *record.Signatures
			if sp := record.SignaturesPath(path); fileExists(sp) {
				if sigs, err = record.ReadSignatures(sp); err != nil {
					return err
				}
			}
			files := map[string]string{}
			for _, n := range verifyInputs {
				if f := c.String(n); f != "" {
					files[n] = f
				}
			}
			req := record.VerifyRequest{Record: body, Source: path, Signatures: sigs, Policy: pol, Files: files}
			if bp := c.String("brief"); bp != "" {
				if req.Brief, err = os.ReadFile(bp); err != nil {
					return err
				}
				req.BriefSource = bp
			}
			v := record.Verify(req)
			// The record must belong to a complete output set (outputs.json
			// written last by propose): not a leftover of an interrupted run.
			// The record must belong to a complete output set (outputs.json
			// written last by propose): not a leftover of an interrupted run,
			// and its brief and brief data not changed outside sluice.
			dir := filepath.Dir(path)
			setState := fmt.Sprintf("complete, %s, brief.json and report.html as %s lists them", filepath.Base(path), filepath.Join(dir, atomicfile.ManifestName))
			if err := atomicfile.CheckSet(dir, filepath.Base(path), "brief.json", "report.html"); err != nil {
				v.Problems = append(v.Problems, err.Error())
				setState = "not complete"
			} else if req.Brief == nil && v.Decision != nil {
				page, err := os.ReadFile(filepath.Join(dir, "report.html"))
				if err == nil {
					err = record.CheckBrief(page, filepath.Join(dir, "report.html"), body)
				}
				if err != nil {
					v.Problems = append(v.Problems, err.Error())
				}
			}
			if req.Brief != nil && v.Decision != nil {
				if err := checkBriefRendering(path, body, v, req.Brief, req.BriefSource); err != nil {
					v.Problems = append(v.Problems, err.Error())
				}
			}
			if c.Bool("json") {
				if err := printVerificationJSON(c.App.Writer, path, v, setState); err != nil {
					return err
				}
			} else {
				printVerification(c.App.Writer, path, v, setState)
			}
			if len(v.Problems) > 0 {
				fmt.Fprintf(c.App.ErrWriter, "%s does not verify:\n", path)
				for _, p := range v.Problems {
					fmt.Fprintf(c.App.ErrWriter, "  %s\n", p)
				}
				return errNotVerified
			}
			return nil
		},
	}
}

// printVerification says exactly what was checked and found.
func printVerification(w io.Writer, path string, v *record.Verification, setState string) {
	if v.Decision == nil {
		return
	}
	d := v.Decision
	if len(v.Problems) == 0 {
		fmt.Fprintf(w, "%s verified: verdict %s under policy %s\n", path, d.Verdict, d.Policy)
	} else {
		fmt.Fprintf(w, "%s: what verify checked (verdict %s, policy %s)\n", path, d.Verdict, d.Policy)
	}
	fmt.Fprintln(w, "  record: read strictly, its exact bytes are what the signatures cover")
	fmt.Fprintf(w, "  output set: %s\n", setState)
	for _, in := range v.Inputs {
		line := fmt.Sprintf("  %s: %s (%s)", in.Name, in.State, in.Path)
		if in.Detail != "" {
			line += ": " + in.Detail
		}
		fmt.Fprintln(w, line)
	}
	for _, s := range v.Signed {
		fmt.Fprintf(w, "  signed: %s by key %s at %s\n", s.Role, s.KeyID, s.SignedAt.Format("2006-01-02T15:04:05Z"))
	}
	for _, s := range v.Withdrawn {
		fmt.Fprintf(w, "  withdrawn: %s by key %s at %s\n", s.Role, s.KeyID, s.SignedAt.Format("2006-01-02T15:04:05Z"))
	}
	for _, n := range v.Notes {
		fmt.Fprintf(w, "  note: %s\n", n)
	}
	switch {
	case v.NoSignoffRequired:
		fmt.Fprintln(w, "  sign-offs: no sign-off required (the policy's rules require none for this decision and it allows unsigned decisions)")
	case len(v.Problems) == 0 && v.Required != nil:
		var roles []string
		for _, r := range v.Required {
			if !slices.Contains(roles, r.Role) {
				roles = append(roles, r.Role)
			}
		}
		fmt.Fprintf(w, "  sign-offs: every role the policy's rules require of this decision signed (%s)\n", strings.Join(roles, ", "))
	}
	if len(v.Problems) == 0 {
		fmt.Fprintln(w, "  not checked: that the figures are right, nor who holds each key; see README, \"What verify guarantees\"")
	}
}

// verificationJSON is verify --json: what was checked and found.
type verificationJSON struct {
	Record            string         `json:"record"`
	Verified          bool           `json:"verified"`
	RecordSHA256      string         `json:"record_sha256"`
	Verdict           string         `json:"verdict,omitempty"`
	Policy            string         `json:"policy,omitempty"`
	OutputSet         string         `json:"output_set"`
	Inputs            []inputJSON    `json:"inputs"`
	Required          []gate.Signoff `json:"required"`
	NoSignoffRequired bool           `json:"no_signoff_required"`
	Signed            []signerJSON   `json:"signed"`
	Withdrawn         []signerJSON   `json:"withdrawn"`
	Notes             []string       `json:"notes"`
	Problems          []string       `json:"problems"`
}

type inputJSON struct {
	Name   string `json:"name"`
	Path   string `json:"path"`
	State  string `json:"state"`
	Detail string `json:"detail,omitempty"`
}

type signerJSON struct {
	Role  string `json:"role"`
	KeyID string `json:"keyid"`
	At    string `json:"at"`
}

func printVerificationJSON(w io.Writer, path string, v *record.Verification, setState string) error {
	out := verificationJSON{Record: path, Verified: len(v.Problems) == 0, OutputSet: setState,
		Inputs: []inputJSON{}, Required: v.Required, NoSignoffRequired: v.NoSignoffRequired,
		Signed: []signerJSON{}, Withdrawn: []signerJSON{}, Notes: v.Notes, Problems: v.Problems}
	if v.Decision != nil {
		out.Verdict, out.Policy = string(v.Decision.Verdict), v.Decision.Policy
	}
	if b, err := os.ReadFile(path); err == nil {
		out.RecordSHA256 = record.SHA256Hex(b)
	}
	for _, in := range v.Inputs {
		out.Inputs = append(out.Inputs, inputJSON{in.Name, in.Path, in.State, in.Detail})
	}
	for _, s := range v.Signed {
		out.Signed = append(out.Signed, signerJSON{s.Role, s.KeyID, s.SignedAt.Format("2006-01-02T15:04:05Z")})
	}
	for _, s := range v.Withdrawn {
		out.Withdrawn = append(out.Withdrawn, signerJSON{s.Role, s.KeyID, s.SignedAt.Format("2006-01-02T15:04:05Z")})
	}
	if out.Required == nil {
		out.Required = []gate.Signoff{}
	}
	if out.Notes == nil {
		out.Notes = []string{}
	}
	if out.Problems == nil {
		out.Problems = []string{}
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}

// checkBriefRendering renders the brief again from the record and the
// brief.json beside it, as propose wrote it (nobody signed) and as report
// writes it (with the roles whose sign-offs hold), and requires the given
// brief to be one of them byte for byte: an edited page fails.
func checkBriefRendering(path string, body []byte, v *record.Verification, brief []byte, briefPath string) error {
	bd, err := readBriefData(path, body)
	if err != nil {
		return fmt.Errorf("brief %s: cannot render it again to compare: %v", briefPath, err)
	}
	var signed []string
	for _, s := range v.Signed {
		if !slices.Contains(signed, s.Role) {
			signed = append(signed, s.Role)
		}
	}
	for _, roles := range [][]string{nil, sortedCopy(signed)} {
		var buf bytes.Buffer
		in := report.Input{Record: v.Decision, Signed: roles, Curves: bd.Curves, Gains: bd.Gains,
			Holdout: bd.Holdout, Title: bd.Title, RecordSHA256: record.SHA256Hex(body)}
		if err := report.Render(&buf, in); err != nil {
			return fmt.Errorf("brief %s: %v", briefPath, err)
		}
		if bytes.Equal(buf.Bytes(), brief) {
			return nil
		}
	}
	return fmt.Errorf("brief %s differs from the brief sluice renders from the record and %s, unsigned or with the %d sign-offs that hold now: the page was edited, or sign-offs changed since it was rendered (sluice report renders it again)",
		briefPath, filepath.Join(filepath.Dir(path), "brief.json"), len(v.Signed))
}

func sortedCopy(xs []string) []string {
	out := slices.Clone(xs)
	slices.Sort(out)
	return out
}

func fileExists(p string) bool {
	_, err := os.Stat(p)
	return err == nil
}
