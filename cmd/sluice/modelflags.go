package main

import (
	"errors"
	"fmt"

	"github.com/urfave/cli/v2"

	"sluice/internal/boundedio"
	"sluice/model"
	"sluice/validation"
)

// modelFlags are the flags every command that fits the model shares.
func modelFlags() []cli.Flag {
	return []cli.Flag{
		&cli.StringFlag{Name: "data", Usage: "weekly panel CSV (header row, ISO week dates)"},
		&cli.StringFlag{Name: "kpi", Usage: "KPI column (revenue, or units with --value-per-kpi)"},
		&cli.StringFlag{Name: "channels", Usage: "comma-separated spend columns"},
		&cli.StringFlag{Name: "controls", Usage: "comma-separated control columns"},
		&cli.StringFlag{Name: "date-column", Usage: "date column (default: \"week\", else the first column)"},
		&cli.StringFlag{Name: "spec", Usage: "model spec YAML (adstock and saturation kinds, bounds, harmonics, horizon)"},
		&cli.StringFlag{Name: "events", Usage: "events CSV (name,date): one 0/1 control per holiday or event, 1 in the weeks holding its dates"},
		&cli.Float64Flag{Name: "value-per-kpi", Value: 1, Usage: "currency per KPI unit, for a KPI counted in units"},
		&cli.IntFlag{Name: "horizon", Usage: "planning horizon in weeks (default 13, or the spec's)"},
		&cli.IntFlag{Name: "harmonics", Value: -1, Usage: "Fourier harmonics of the yearly season (default 2, or the spec's)"},
		&cli.BoolFlag{Name: "no-trend", Usage: "leave the linear trend out of the base"},
		&cli.IntFlag{Name: "starts", Usage: "multi-start count of the fit (default 6, or the spec's)"},
		&cli.Uint64Flag{Name: "seed", Value: 1, Usage: "seed of every random stream; recorded in every output"},
		&cli.IntFlag{Name: "workers", Value: 2, Usage: "parallel workers"},
		&cli.StringFlag{Name: "lifts", Usage: "lift-test CSV (channel,start,end,incremental,std_error): every fit is calibrated with it"},
		&cli.StringFlag{Name: "drifting", Usage: "comma-separated channels (or \"all\") whose effectiveness may change smoothly over the history; the horizon uses the last week's"},
		&cli.StringFlag{Name: "seasonal", Usage: "comma-separated channels (or \"all\") whose effectiveness follows the yearly season; the horizon uses each future week's"},
	}
}

// modelInput is a loaded panel and spec with their hashes.
type modelInput struct {
	DataPath    string
	Panel       *model.Panel
	Spec        model.Spec
	Design      *model.Design
	ValuePerKPI float64
	Seed        uint64
	Workers     int
	DataSHA256  string
	SpecPath    string
	SpecSHA256  string // "" without a spec file
	// Sources says where the value per KPI unit and the horizon came from
	// (consistency.go), so a plan that contradicts them names both places.
	Sources map[string]string
	// LiftsPath is the lift-test file (--lifts, or lifts: in sluice.yaml);
	// Design carries its tests, so every fit of Design is calibrated with
	// them. LiftsSHA256 is "" without one.
	LiftsPath    string
	LiftsSHA256  string
	Lifts        []validation.LiftTest
	EventsPath   string // --events file, "" without one
	EventsSHA256 string
}

func loadModelInput(o *opts) (*modelInput, error) {
	in := &modelInput{DataPath: o.String("data"), ValuePerKPI: o.Float("value-per-kpi"),
		Seed: o.Uint64("seed"), Workers: max(1, o.Int("workers"))}
	if in.DataPath == "" {
		return nil, withHint(errors.New("no data file"), "pass --data weekly.csv (or set data: in sluice.yaml)")
	}
	if !(in.ValuePerKPI > 0) {
		return nil, fmt.Errorf("--value-per-kpi %s must be positive", plain(in.ValuePerKPI, 6))
	}
	var specFile *model.SpecFile
	specPath := o.String("spec")
	in.SpecPath = specPath
	controls := o.List("controls")
	if specPath != "" {
		f, err := model.LoadSpecFile(specPath)
		if err != nil {
			return nil, err
		}
		specFile = f
		if in.SpecSHA256, err = sha256File(specPath); err != nil {
			return nil, err
		}
		if len(controls) == 0 {
			controls = f.Controls
		}
	}
	cols := model.Columns{Date: o.String("date-column"), KPI: o.String("kpi"), Channels: o.List("channels"), Controls: controls}
	if cols.KPI == "" {
		return nil, withHint(errors.New("no KPI column"), "pass --kpi revenue (the column the model explains)")
	}
	if len(cols.Channels) == 0 {
		return nil, withHint(errors.New("no channels"), "pass --channels search,social,... (the spend columns)")
	}
	p, err := model.LoadPanel(in.DataPath, cols)
	if err != nil {
		return nil, err
	}
	in.Panel = p
	spec := model.NewSpec(cols.Channels, controls)
	if specFile != nil {
		if err := spec.ApplyFile(specFile, specPath); err != nil {
			return nil, err
		}
	}
	if h := o.Int("horizon"); h != 0 {
		spec.Horizon = h
	}
	if h := o.Int("harmonics"); h >= 0 {
		spec.Harm = h
	}
	if o.Bool("no-trend") {
		spec.Trend = false
	}
	if s := o.Int("starts"); s != 0 {
		spec.Starts = s
	}
	var specEvents []model.Event
	if specFile != nil {
		specEvents = specFile.Events
	}
	if in.EventsPath, in.EventsSHA256, err = applyEvents(o, p, &spec, specEvents, specPath); err != nil {
		return nil, err
	}
	if names := o.List("drifting"); len(names) > 0 {
		if err := spec.SetDrifting(names); err != nil {
			return nil, withHint(err, "pass --drifting with channels from --channels, or all")
		}
	}
	if names := o.List("seasonal"); len(names) > 0 {
		for _, n := range names {
			for _, c := range spec.Channels {
				if c.Drifting() && (n == "all" || n == c.Name) {
					return nil, withHint(fmt.Errorf("channel %q cannot be both drifting and seasonal", c.Name), "name each channel in one of --drifting and --seasonal")
				}
			}
		}
		if err := spec.SetSeasonal(names); err != nil {
			return nil, withHint(err, "pass --seasonal with channels from --channels, or all")
		}
	}
	if err := spec.Validate("model"); err != nil {
		return nil, err
	}
	in.Spec = spec
	if in.Sources, err = settingSources(o, in); err != nil {
		return nil, err
	}
	if in.Design, err = model.NewDesign(p, spec); err != nil {
		return nil, err
	}
	if in.DataSHA256, err = sha256File(in.DataPath); err != nil {
		return nil, err
	}
	if path := o.String("lifts"); path != "" {
		if err := in.loadLifts(path); err != nil {
			return nil, err
		}
	}
	return in, nil
}

// loadLifts reads the lift tests and puts them into the design, so the
// likelihood of every fit (fit, bootstrap and its refits, curves,
// validate, allocate, propose) includes them.
func (in *modelInput) loadLifts(path string) error {
	lifts, err := validation.LoadLifts(path, in.Panel)
	if err != nil {
		return err
	}
	rows := make([]model.Lift, len(lifts))
	for i, l := range lifts {
		rows[i] = model.Lift{Channel: l.ChannelIndex, From: l.From, To: l.To, Incremental: l.Incremental, StdError: l.StdError}
	}
	d, err := in.Design.WithLifts(rows)
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if in.LiftsSHA256, err = sha256File(path); err != nil {
		return err
	}
	in.Design, in.LiftsPath, in.Lifts = d, path, lifts
	return nil
}

// sha256File hashes the file at path as it streams (a draws file may be
// far larger than the other inputs: the larger limit applies).
func sha256File(path string) (string, error) {
	return boundedio.SHA256(path, boundedio.MaxDraws)
}
