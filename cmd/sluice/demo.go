package main

import (
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"github.com/urfave/cli/v2"

	"sluice/examples"
	"sluice/model"
)

func demoCommand() *cli.Command {
	return &cli.Command{
		Name:  "demo",
		Usage: "run the whole job on the embedded example company (Fernhill Tea Co., invented)",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "out", Value: "sluice-demo", Usage: "directory for the demo's inputs and outputs"},
			&cli.Uint64Flag{Name: "seed", Value: 1, Usage: "seed of every random stream"},
		},
		Action: func(c *cli.Context) error {
			dir := c.String("out")
			if err := os.MkdirAll(dir, 0o755); err != nil {
				return err
			}
			if err := copyExamples(dir); err != nil {
				return err
			}
			w := c.App.Writer
			data := filepath.Join(dir, "weekly.csv")
			fmt.Fprintf(w, "Fernhill Tea Co. (an invented company): %s\n\n", data)
			p, err := model.LoadPanel(data, model.Columns{KPI: examples.KPI, Channels: examples.Channels, Controls: examples.Controls})
			if err != nil {
				return err
			}
			spec := model.NewSpec(examples.Channels, examples.Controls)
			d, err := model.NewDesign(p, spec)
			if err != nil {
				return err
			}
			seed := c.Uint64("seed")
			fr, err := d.Fit(p.KPI, model.FitSettings{Seed: seed, Workers: 2})
			if err != nil {
				return err
			}
			hash, err := sha256File(data)
			if err != nil {
				return err
			}
			in := &modelInput{DataPath: data, Panel: p, Spec: spec, Design: d, ValuePerKPI: 1, Seed: seed, DataSHA256: hash}
			printFitTable(w, newFitSummary(in, fr))
			fmt.Fprintf(w, "\nthe same by hand:\n  sluice fit --data %s --kpi %s --channels %s --controls %s\n",
				data, examples.KPI, strings.Join(examples.Channels, ","), strings.Join(examples.Controls, ","))
			return nil
		},
	}
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
		return os.WriteFile(filepath.Join(dir, path), b, 0o644)
	})
}
