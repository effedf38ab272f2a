package main

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"time"

	"github.com/urfave/cli/v2"

	"sluice/internal/atomicfile"
	"sluice/model"
)

func simulateCommand() *cli.Command {
	return &cli.Command{
		Name:  "simulate",
		Usage: "draw a synthetic weekly panel from a known truth (weekly.csv and truth.json)",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "truth", Usage: "truth YAML: channels with true adstock, saturation and coefficient, baseline, controls, noise, seed"},
			&cli.StringFlag{Name: "dir", Usage: "output directory (was --out)"},
		},
		Action: func(c *cli.Context) error {
			o, err := newOpts(c)
			if err != nil {
				return err
			}
			path, dir := o.String("truth"), o.String("dir")
			if path == "" || dir == "" {
				return withHint(errors.New("simulate needs --truth and --dir"), "sluice simulate --truth truth.yaml --dir DIR")
			}
			tr, err := model.LoadTruth(path)
			if err != nil {
				return err
			}
			sim, err := model.Simulate(tr)
			if err != nil {
				return err
			}
			if err := os.MkdirAll(dir, 0o755); err != nil {
				return err
			}
			if err := atomicfile.WriteFunc(filepath.Join(dir, "weekly.csv"), 0o644, func(w io.Writer) error {
				return writePanelCSV(w, sim.Panel)
			}); err != nil {
				return err
			}
			if err := writeJSON(filepath.Join(dir, "truth.json"), newTruthFile(sim)); err != nil {
				return err
			}
			fmt.Fprintf(c.App.Writer, "wrote %s and %s (%d weeks, %d channels, seed %d)\n",
				filepath.Join(dir, "weekly.csv"), filepath.Join(dir, "truth.json"), sim.Panel.NumWeeks(), len(sim.Panel.Channels), tr.Seed)
			return nil
		},
	}
}

// truthFile is truth.json: the truth as given plus the true figures of
// every channel, defined exactly as the fit reports them.
type truthFile struct {
	Tool     string               `json:"tool"`
	Version  string               `json:"version"`
	Seed     uint64               `json:"seed"`
	Truth    *model.Truth         `json:"truth"`
	Params   model.Params         `json:"params"`
	Channels []trueChannelFigures `json:"channels"`
}

type trueChannelFigures struct {
	model.ChannelSummary
	HorizonResponse float64 `json:"horizon_response"` // R(current spend) over the horizon, KPI units
}

func newTruthFile(sim *model.Simulated) truthFile {
	tf := truthFile{Tool: "sluice", Version: version, Seed: sim.Truth.Seed, Truth: sim.Truth, Params: sim.Params}
	for k, s := range sim.Summary {
		tf.Channels = append(tf.Channels, trueChannelFigures{ChannelSummary: s, HorizonResponse: sim.Response[k]})
	}
	return tf
}

// writePanelCSV writes a panel in the format the loader reads.
func writePanelCSV(w io.Writer, p *model.Panel) error {
	cw := csv.NewWriter(w)
	date := p.DateName
	if date == "" {
		date = "week"
	}
	header := append([]string{date, p.KPIName}, p.Channels...)
	header = append(header, p.Controls...)
	if err := cw.Write(header); err != nil {
		return err
	}
	num := func(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }
	for t, wk := range p.Weeks {
		row := []string{wk.Format(time.DateOnly), num(p.KPI[t])}
		for k := range p.Channels {
			row = append(row, num(p.Spend[k][t]))
		}
		for j := range p.Controls {
			row = append(row, num(p.Control[j][t]))
		}
		if err := cw.Write(row); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
