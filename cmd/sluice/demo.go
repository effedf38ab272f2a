package main

import (
	"crypto/rand"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"strings"

	"github.com/urfave/cli/v2"

	"sluice/examples"
	"sluice/internal/atomicfile"
	"sluice/model"
	"sluice/policies"
	"sluice/record"
)

// demoDraws keeps the demo within a minute on two cores.
const demoDraws = 300

func demoCommand() *cli.Command {
	return &cli.Command{
		Name:  "demo",
		Usage: "run the whole job on the embedded example company (Fernhill Tea Co., invented)",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "out", Value: "sluice-demo", Usage: "directory for the demo's inputs and outputs"},
			&cli.Uint64Flag{Name: "seed", Value: 1, Usage: "seed of every random stream"},
			&cli.IntFlag{Name: "workers", Value: 2, Usage: "parallel workers"},
			&cli.BoolFlag{Name: "quiet", Usage: "no progress bar"},
		},
		Action: runDemo,
	}
}

func runDemo(c *cli.Context) error {
	dir := c.String("out")
	w := c.App.Writer
	if err := os.MkdirAll(filepath.Join(dir, "keys"), 0o755); err != nil {
		return err
	}
	if err := guardSigned(dir, false, false); err != nil {
		return err
	}
	if err := copyExamples(dir); err != nil {
		return err
	}
	policyPath, roles, err := writeDemoPolicy(dir)
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "Fernhill Tea Co. (an invented company), %d weeks of data in %s\n\n", 156, filepath.Join(dir, "weekly.csv"))

	data := filepath.Join(dir, "weekly.csv")
	cols := model.Columns{KPI: examples.KPI, Channels: examples.Channels, Controls: examples.Controls}
	p, err := model.LoadPanel(data, cols)
	if err != nil {
		return err
	}
	spec := model.NewSpec(examples.Channels, examples.Controls)
	d, err := model.NewDesign(p, spec)
	if err != nil {
		return err
	}
	hash, err := sha256File(data)
	if err != nil {
		return err
	}
	in := &modelInput{DataPath: data, Panel: p, Spec: spec, Design: d, ValuePerKPI: 1, Seed: c.Uint64("seed"),
		Workers: max(1, c.Int("workers")), DataSHA256: hash}
	// The example's lift tests are in every fit, as --lifts puts them.
	if err := in.loadLifts(filepath.Join(dir, "lifts.csv")); err != nil {
		return err
	}
	fr, err := in.Design.Fit(p.KPI, model.FitSettings{Seed: in.Seed, Workers: in.Workers})
	if err != nil {
		return err
	}
	fmt.Fprintln(w, "1. the fitted model")
	printFitTable(w, newFitSummary(in, fr))

	fmt.Fprintf(w, "\n2-5. bootstrap (%d refits), validation, allocation and the gate under %s\n\n", demoDraws, policyPath)
	run, err := decide(c, in, decisionArgs{Plan: filepath.Join(dir, "plan.yaml"), Policy: policyPath,
		Lifts: filepath.Join(dir, "lifts.csv"), BootstrapDraws: demoDraws, Quiet: c.Bool("quiet")})
	if err != nil {
		return err
	}
	recPath, brief, err := writeDecisionSet(dir, run, "Fernhill Tea Co. (invented demo company)", false)
	if err != nil {
		return err
	}
	printDecision(w, run.rec)
	fmt.Fprintf(w, "\nwrote %s, %s and %s\n", recPath, brief, policyPath)
	fmt.Fprintf(w, "open the brief in a browser: %s\n\n", brief)
	fmt.Fprintln(w, "next, sign with the demo keys (DEMO KEYS, never for real decisions) and verify:")
	seen := map[string]bool{}
	for _, s := range run.rec.SignoffsRequired {
		if seen[s.Role] {
			continue
		}
		seen[s.Role] = true
		fmt.Fprintf(w, "  go run ./cmd/sluice sign --record %s --key %s --role %s\n", recPath, roles[s.Role], s.Role)
	}
	fmt.Fprintf(w, "  go run ./cmd/sluice verify --record %s --policy %s --brief %s\n", recPath, policyPath, brief)
	fmt.Fprintf(w, "  go run ./cmd/sluice report --record %s --policy %s   # the brief again, showing who signed\n", recPath, policyPath)
	return nil
}

// writeDemoPolicy writes DIR/policy.yaml: the standard preset with a demo
// key pair per role (made once, in DIR/keys, and kept), and returns its
// path and each role's private key path.
func writeDemoPolicy(dir string) (string, map[string]string, error) {
	std, err := policies.Preset("standard")
	if err != nil {
		return "", nil, err
	}
	text := string(std.Raw)
	keys := map[string]string{}
	for role := range std.Roles {
		prefix := filepath.Join(dir, "keys", role)
		keyPath, pubPath := prefix+".key", prefix+".pub"
		if !fileExists(keyPath) {
			if _, _, err := record.GenerateKeyFiles(prefix, rand.Reader); err != nil {
				return "", nil, err
			}
		} else if !fileExists(pubPath) {
			return "", nil, fmt.Errorf("%s exists without %s; remove the demo directory", keyPath, pubPath)
		}
		keys[role] = keyPath
		pub, err := os.ReadFile(pubPath)
		if err != nil {
			return "", nil, err
		}
		// The role's block in the preset lists no keys; pin the demo key by
		// its PEM text, so the policy's hash covers it.
		re := regexp.MustCompile(`(?m)^(  ` + regexp.QuoteMeta(role) + `:\n(?:    .*\n)*?    keys: )\[\]\n`)
		if !re.MatchString(text) {
			return "", nil, errors.New("demo: the standard preset's role " + role + " has no empty keys list")
		}
		block := "      - |   # DEMO KEY, " + filepath.ToSlash(pubPath) + "\n        " +
			strings.ReplaceAll(strings.TrimSpace(string(pub)), "\n", "\n        ") + "\n"
		head := strings.TrimSuffix(re.FindStringSubmatch(text)[1], " ")
		text = re.ReplaceAllLiteralString(text, head+"\n"+block)
	}
	text = strings.Replace(text, "name: standard", "name: fernhill-demo", 1)
	text += "signing:\n  max_age_days: 90   # verify refuses sign-offs older than this (a rule of thumb, no source)\n"
	text = "# DEMO POLICY for the invented Fernhill Tea Co.: the standard preset with demo\n" +
		"# signing keys pinned inline (their files are keys/*.pub). Demo keys are for\n" +
		"# trying sluice only.\n" + text
	path := filepath.Join(dir, "policy.yaml")
	if err := atomicfile.Write(path, []byte(text), 0o644); err != nil {
		return "", nil, err
	}
	if _, err := policies.Load(path); err != nil {
		return "", nil, fmt.Errorf("demo policy: %w", err)
	}
	return path, keys, nil
}

// copyExamples writes the embedded scenario files into dir.
func copyExamples(dir string) error {
	return fs.WalkDir(examples.Files, ".", func(path string, e fs.DirEntry, err error) error {
		if err != nil || e.IsDir() {
			return err
		}
		b, err := examples.Files.ReadFile(path)
		if err != nil {
			return err
		}
		return atomicfile.Write(filepath.Join(dir, path), b, 0o644)
	})
}
