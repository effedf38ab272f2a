package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"syscall"

	"github.com/urfave/cli/v2"

	"sluice/model"
	"sluice/uncertainty"
)

// loadDraws reads a draws file and checks it against the data and spec it
// is used with, naming the files in a mismatch.
func loadDraws(in *modelInput, path string) (*uncertainty.Draws, error) {
	d, err := uncertainty.ReadDraws(path)
	if err != nil {
		return nil, err
	}
	if err := d.Check(in.DataSHA256, in.SpecSHA256, in.Spec); err != nil {
		var me *uncertainty.MismatchError
		if errors.As(err, &me) {
			named := *me
			switch me.What {
			case "data":
				named.GivenName = in.DataPath
			case "spec":
				named.GivenName = "this spec"
				if in.SpecPath != "" {
					named.GivenName = in.SpecPath
				}
			}
			return nil, withHint(&named, "pass the --data, --spec and model flags the draws were made with")
		}
		return nil, err
	}
	if got := d.Header.Inputs.LiftsSHA256; got != in.LiftsSHA256 {
		switch {
		case in.LiftsSHA256 == "":
			return nil, withHint(fmt.Errorf("%s was made with lift tests (sha256 %.12s…) in the fit, and no --lifts is given", path, got),
				"pass the --lifts file the draws were made with, or rerun sluice bootstrap without it")
		case got == "":
			return nil, withHint(fmt.Errorf("%s was made without lift tests, but --lifts %s is given", path, in.LiftsPath),
				"rerun sluice bootstrap with --lifts, so the draws are calibrated like every other fit")
		default:
			return nil, withHint(fmt.Errorf("%s was made with other lift tests (sha256 %.12s…) than %s (%.12s…)", path, got, in.LiftsPath, in.LiftsSHA256),
				"pass the --lifts file the draws were made with, or rerun sluice bootstrap")
		}
	}
	if len(d.Params()) == 0 {
		return nil, fmt.Errorf("%s: all %d replicates failed (first: %s)", path, len(d.Replicates), d.Replicates[0].Reason)
	}
	return d, nil
}

// drawsFor returns the draws of the file given, or runs a bootstrap of n
// replicates here when no file is given (progress on a terminal).
func drawsFor(c *cli.Context, in *modelInput, path string, n int, quiet bool) (*uncertainty.Draws, string, error) {
	if path != "" {
		d, err := loadDraws(in, path)
		return d, path, err
	}
	ctx, stop := signal.NotifyContext(c.Context, os.Interrupt, syscall.SIGTERM)
	defer stop()
	b := &uncertainty.Bootstrap{Design: in.Design, Y: in.Panel.KPI, Method: uncertainty.MovingBlock,
		Draws: n, Seed: in.Seed, Workers: in.Workers}
	bar := progressBar(c, quiet)
	if bar != nil {
		b.Progress = bar.update
	}
	d, err := b.Run(ctx)
	bar.finish()
	if err != nil {
		if ctx.Err() != nil {
			return nil, "", errors.New("interrupted; nothing was written")
		}
		return nil, "", err
	}
	d.Header.ToolVersion = version
	d.Header.Inputs = uncertainty.Inputs{DataSHA256: in.DataSHA256, SpecSHA256: in.SpecSHA256, LiftsSHA256: in.LiftsSHA256}
	for _, n := range d.Notes() {
		printNote(c.App.ErrWriter, n)
	}
	if len(d.Params()) == 0 {
		return nil, "", fmt.Errorf("all %d bootstrap refits failed", n)
	}
	return d, "", nil
}

// printNote writes a bootstrap note as a warning line with its hint.
func printNote(w io.Writer, n uncertainty.Note) {
	fmt.Fprintf(w, "warning: %s\n", n.Text)
	if n.Hint != "" {
		fmt.Fprintf(w, "hint: %s\n", n.Hint)
	}
}

// fullFitParams is the point fit stored in a draws header.
func fullFitParams(d *uncertainty.Draws) model.Params { return d.Header.FullFit.Params }
