package main

import (
	"errors"
	"fmt"
	"io"
	"math"
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
	if err := checkDrawBounds(d, in.Spec, path); err != nil {
		return nil, withHint(err, "a refit never leaves the spec's bounds, so the file was edited or made with another spec; rerun sluice bootstrap")
	}
	if len(d.Params()) == 0 {
		return nil, fmt.Errorf("%s: all %d replicates failed (first: %s)", path, len(d.Replicates), d.Replicates[0].Reason)
	}
	return d, nil
}

// checkDrawBounds refuses a draws file holding a parameter outside the
// spec's bounds (a Hill shape of -50, say), a negative media coefficient,
// or a number that is not finite, naming the line (1: the header's full
// fit; replicates follow in file order). It cannot see coefficients scaled
// within their bounds: the record's hash of the draws file, checked by
// verify, shows a file changed after the decision, not one forged before.
func checkDrawBounds(d *uncertainty.Draws, spec model.Spec, path string) error {
	check := func(line int, what string, p *model.Params) error {
		if p == nil {
			return nil
		}
		bad := func(format string, a ...any) error {
			return fmt.Errorf("%s:%d: %s: %s", path, line, what, fmt.Sprintf(format, a...))
		}
		if len(p.Channels) != len(spec.Channels) {
			return bad("%d channels, the spec has %d", len(p.Channels), len(spec.Channels))
		}
		for k, c := range p.Channels {
			cs := spec.Channels[k]
			in := func(name string, v float64, r model.Range) error {
				tol := 1e-9 * max(1, math.Abs(r[0]), math.Abs(r[1]))
				if math.IsNaN(v) || v < r[0]-tol || v > r[1]+tol {
					return bad("channel %s: %s %v is outside the spec's bounds [%v, %v]", cs.Name, name, v, r[0], r[1])
				}
				return nil
			}
			if err := in("decay", c.Decay, cs.Decay); err != nil {
				return err
			}
			if err := in("half saturation", c.HalfSat, cs.HalfSaturation); err != nil {
				return err
			}
			if cs.Saturation == model.SaturationHill {
				if err := in("Hill shape", c.Shape, cs.Shape); err != nil {
					return err
				}
			}
			if cs.Adstock == model.AdstockDelayed {
				if err := in("peak", c.Peak, cs.Peak); err != nil {
					return err
				}
			}
			if !(c.Beta >= 0) || math.IsInf(c.Beta, 0) {
				return bad("channel %s: coefficient %v is not a finite number >= 0", cs.Name, c.Beta)
			}
		}
		for j, v := range p.Fixed {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return bad("fixed coefficient %d is %v", j, v)
			}
		}
		return nil
	}
	if err := check(1, "the full fit", &d.Header.FullFit.Params); err != nil {
		return err
	}
	for i, r := range d.Replicates {
		if r.Failed {
			continue
		}
		if err := check(i+2, fmt.Sprintf("replicate %d", r.Index), r.Params); err != nil {
			return err
		}
	}
	return nil
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
