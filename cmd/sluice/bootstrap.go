package main

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strconv"
	"strings"
	"syscall"
	"text/tabwriter"
	"time"

	"github.com/urfave/cli/v2"
	"golang.org/x/term"

	"sluice/internal/atomicfile"
	"sluice/model"
	"sluice/uncertainty"
)

func bootstrapCommand() *cli.Command {
	return &cli.Command{
		Name:  "bootstrap",
		Usage: "refit the model on resampled histories and write one fitted model per replicate (draws file)",
		Description: "Fits the data (multi-start), then refits fitted values plus resampled residuals, warm-started.\n" +
			"Replicate i depends only on --seed and i, so --shard K/N jobs merged with `sluice merge`\n" +
			"give exactly the file of one run. The format is described in uncertainty/DRAWS.md.",
		Flags: append(modelFlags(),
			&cli.IntFlag{Name: "draws", Value: uncertainty.DefaultDraws, Usage: "replicates of the whole run (all shards)"},
			&cli.StringFlag{Name: "method", Value: string(uncertainty.MovingBlock), Usage: "residual resampling: block (moving-block), stationary or wild"},
			&cli.StringFlag{Name: "block-length", Value: "auto", Usage: "block length (mean length for stationary): auto (AR(1) plug-in rule on the full fit's residuals, capped) or a number"},
			&cli.IntFlag{Name: "refit-starts", Value: uncertainty.DefaultRefitStarts, Usage: "starts of each replicate's refit: the warm start, then seeded random probes (1: warm only, the cheapest)"},
			&cli.StringFlag{Name: "shard", Value: "1/1", Usage: "compute only shard K of N: replicates i with i % N == K-1"},
			&cli.BoolFlag{Name: "quiet", Usage: "no progress bar and no summary line"},
			&cli.StringFlag{Name: "out", Usage: "draws file to write (JSON Lines)"},
		),
		Action: func(c *cli.Context) error {
			o, err := newOpts(c)
			if err != nil {
				return err
			}
			out := o.String("out")
			if out == "" {
				return withHint(errors.New("bootstrap needs --out"), "pass --out draws.jsonl")
			}
			method, err := uncertainty.ParseMethod(o.String("method"))
			if err != nil {
				return withHint(err, "use --method block, stationary or wild")
			}
			bl, err := parseBlockLength(o.String("block-length"), method)
			if err != nil {
				return err
			}
			shard, err := uncertainty.ParseShard(o.String("shard"))
			if err != nil {
				return withHint(err, "e.g. --shard 2/8 for the second of eight jobs")
			}
			draws := o.Int("draws")
			if draws < 1 {
				return fmt.Errorf("--draws %d must be at least 1", draws)
			}
			in, err := loadModelInput(o)
			if err != nil {
				return err
			}
			ctx, stop := signal.NotifyContext(c.Context, os.Interrupt, syscall.SIGTERM)
			defer stop()
			quiet := o.Bool("quiet")
			rs := o.Int("refit-starts")
			if rs < 1 || rs > 200 {
				return withHint(fmt.Errorf("--refit-starts %d must be between 1 and 200", rs), "1 is the warm start alone; the default is %d", uncertainty.DefaultRefitStarts)
			}
			b := &uncertainty.Bootstrap{Design: in.Design, Y: in.Panel.KPI, Method: method, BlockLength: bl,
				Draws: draws, Seed: in.Seed, Shard: shard, Workers: in.Workers, RefitStarts: rs}
			bar := progressBar(c, quiet)
			if bar != nil {
				b.Progress = bar.update
			}
			d, err := b.Run(ctx)
			bar.finish()
			if err != nil {
				if ctx.Err() != nil {
					return fmt.Errorf("interrupted; %s was not written", out)
				}
				return err
			}
			d.Header.ToolVersion = version
			d.Header.Inputs = uncertainty.Inputs{DataSHA256: in.DataSHA256, SpecSHA256: in.SpecSHA256, LiftsSHA256: in.LiftsSHA256}
			if err := writeDraws(out, d); err != nil {
				return err
			}
			reportDraws(c.App.Writer, c.App.ErrWriter, out, d, quiet)
			return nil
		},
	}
}

// parseBlockLength reads --block-length: "auto" is 0 (automatic).
func parseBlockLength(s string, m uncertainty.Method) (float64, error) {
	s = strings.TrimSpace(s)
	if s == "auto" || s == "" {
		return 0, nil
	}
	if m == uncertainty.Wild {
		return 0, withHint(fmt.Errorf("--block-length %s has no effect with --method wild", s), "leave --block-length out, or use --method block")
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || !(v >= 1) || v > 1e6 {
		return 0, withHint(fmt.Errorf("--block-length %q is not auto or a number >= 1", s), "e.g. --block-length 4, or auto")
	}
	return v, nil
}

func writeDraws(path string, d *uncertainty.Draws) error {
	return atomicfile.WriteFunc(path, 0o644, func(w io.Writer) error {
		_, err := d.WriteTo(w)
		return err
	})
}

func reportDraws(stdout, stderr io.Writer, path string, d *uncertainty.Draws, quiet bool) {
	h := d.Header
	failed := d.Failed()
	if !quiet {
		bl := "none (wild)"
		if h.Method != uncertainty.Wild {
			bl = fmt.Sprintf("%.3g", h.BlockLength)
			if h.BlockLengthAuto {
				bl += " (AR(1) plug-in rule)"
			}
		}
		fmt.Fprintf(stdout, "wrote %s: %d replicates (shard %s of %d), %d failed; %s bootstrap, block length %s, seed %d\n",
			path, len(d.Replicates), h.Shard, h.Draws, failed, h.Method, bl, h.Seed)
	}
	if failed > 0 {
		fmt.Fprintf(stderr, "warning: %d of %d refits did not converge; they are kept in %s with \"failed\": true and their reasons, and left out of every summary\n",
			failed, len(d.Replicates), path)
	}
	if !quiet {
		fmt.Fprintf(stdout, "residuals inflated by %.4g (sqrt(n/(n-p))); %d starts per refit; priors: %s; lift tests in the fit: %d\n",
			h.Inflation, h.RefitStarts, priorWords(h.FullFit.Priors), h.FullFit.LiftTests)
		tw := tabwriter.NewWriter(stdout, 0, 0, 2, ' ', 0)
		fmt.Fprintln(tw, "channel\treplicates on a bound: decay\thalf saturation\tshape\tany")
		for _, b := range d.OnBound() {
			fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\n", b.Channel, shareWord(b.Decay), shareWord(b.HalfSaturation), shareWord(b.Shape), shareWord(b.Any))
		}
		tw.Flush()
	}
	for _, n := range d.Notes() {
		if strings.Contains(n.Text, "refits failed") && failed > 0 {
			// The failure count is said above; keep the hint.
			fmt.Fprintf(stderr, "hint: %s\n", n.Hint)
			continue
		}
		printNote(stderr, n)
	}
}

// shareWord prints a bound share; -1 (fixed parameter) and 0 for a
// parameter the channel does not have print as "-".
func shareWord(v float64) string {
	if v < 0 {
		return "fixed"
	}
	return fmt.Sprintf("%.0f%%", 100*v)
}

// priorWords says which priors the fit used.
func priorWords(p model.Priors) string {
	if p == nil {
		return "none (least squares)"
	}
	set := 0
	for _, c := range p {
		if !c.ROIDefault {
			set++
		}
	}
	return fmt.Sprintf("defaults, ROI priors set for %d of %d channels", set, len(p))
}

// replicateBar draws a one-line progress bar: replicates done, rate and
// time left. A nil bar does nothing.
type replicateBar struct {
	w     io.Writer
	start time.Time
	last  time.Time
	drawn bool
}

func (p *replicateBar) update(done, total int) {
	now := time.Now()
	if done < total && now.Sub(p.last) < 100*time.Millisecond {
		return
	}
	p.last = now
	const width = 30
	fill := width * done / max(total, 1)
	el := now.Sub(p.start).Seconds()
	rate := float64(done) / max(el, 1e-9)
	left := "?"
	if done > 0 {
		left = (time.Duration(float64(total-done)/rate) * time.Second).Round(time.Second).String()
	}
	fmt.Fprintf(p.w, "\r[%s%s] %d/%d replicates  %.1f/s  %s left   ",
		strings.Repeat("=", fill), strings.Repeat(" ", width-fill), done, total, rate, left)
	p.drawn = true
}

// progressBar returns a bar on stderr when it is a terminal and not quiet.
func progressBar(c *cli.Context, quiet bool) *replicateBar {
	if f, ok := c.App.ErrWriter.(*os.File); ok && !quiet && term.IsTerminal(int(f.Fd())) {
		return &replicateBar{w: f, start: time.Now()}
	}
	return nil
}

func (p *replicateBar) finish() {
	if p != nil && p.drawn {
		fmt.Fprintln(p.w)
	}
}

func mergeCommand() *cli.Command {
	return &cli.Command{
		Name:      "merge",
		Usage:     "combine the shard files of one bootstrap run into the file of the whole run",
		ArgsUsage: "PART.jsonl...",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "out", Usage: "merged draws file to write"},
		},
		Action: func(c *cli.Context) error {
			out := c.String("out")
			if out == "" {
				return withHint(errors.New("merge needs --out"), "sluice merge --out draws.jsonl part*.jsonl")
			}
			if c.NArg() == 0 {
				return withHint(errors.New("merge needs the shard files"), "sluice merge --out draws.jsonl part*.jsonl")
			}
			var parts []*uncertainty.Draws
			for _, path := range c.Args().Slice() {
				d, err := uncertainty.ReadDraws(path)
				if err != nil {
					return err
				}
				parts = append(parts, d)
			}
			m, err := uncertainty.Merge(parts)
			if err != nil {
				return err
			}
			if err := writeDraws(out, m); err != nil {
				return err
			}
			fmt.Fprintf(c.App.Writer, "merged %d files into %s: %d replicates, %d failed\n", len(parts), out, len(m.Replicates), m.Failed())
			return nil
		},
	}
}

func curvesCommand() *cli.Command {
	return &cli.Command{
		Name:  "curves",
		Usage: "summarize a draws file: per-channel ROI and marginal ROI bands, response-curve bands (--csv)",
		Flags: append(modelFlags(),
			&cli.StringFlag{Name: "draws", Usage: "draws file written by sluice bootstrap (command line only)"},
			&cli.BoolFlag{Name: "json", Usage: "print JSON instead of the table"},
			&cli.StringFlag{Name: "csv", Usage: "write response-curve bands over a weekly spend grid to this CSV file"},
		),
		Action: func(c *cli.Context) error {
			o, err := newOpts(c)
			if err != nil {
				return err
			}
			// Read from the command line only: in sluice.yaml "draws" is
			// bootstrap's replicate count.
			path := c.String("draws")
			if path == "" {
				return withHint(errors.New("curves needs --draws"), "pass --draws draws.jsonl (written by sluice bootstrap)")
			}
			in, err := loadModelInput(o)
			if err != nil {
				return err
			}
			d, err := loadDraws(in, path)
			if err != nil {
				return err
			}
			params := d.Params()
			bands := uncertainty.SummarizeDraws(in.Design, params, in.ValuePerKPI)
			if csvPath := o.String("csv"); csvPath != "" {
				rb := uncertainty.ResponseBands(in.Design, params, in.Spec.Horizon)
				if err := atomicfile.WriteFunc(csvPath, 0o644, func(w io.Writer) error { return writeBandsCSV(w, rb) }); err != nil {
					return err
				}
			}
			sum := curvesSummary{Channels: bands, Draws: len(d.Replicates), Failed: d.Failed(), Seed: d.Header.Seed,
				Method: d.Header.Method, BlockLength: d.Header.BlockLength, QuantileType: int(uncertainty.QuantileType)}
			if o.Bool("json") {
				return printJSON(c.App.Writer, sum)
			}
			printCurvesTable(c.App.Writer, sum, in.Spec.Horizon)
			return nil
		},
	}
}

// curvesSummary is `sluice curves --json`.
type curvesSummary struct {
	Channels     []uncertainty.ChannelBands `json:"channels"`
	Draws        int                        `json:"draws"`  // replicates in the file
	Failed       int                        `json:"failed"` // left out of the bands
	Seed         uint64                     `json:"seed"`
	Method       uncertainty.Method         `json:"method"`
	BlockLength  float64                    `json:"block_length"`
	QuantileType int                        `json:"quantile_type"` // Hyndman–Fan
}

func printCurvesTable(w io.Writer, s curvesSummary, horizon int) {
	fmt.Fprintf(w, "ROI over the data and marginal ROI at current spend (%d-week horizon), over %d successful of %d bootstrap draws (%d failed)\n",
		horizon, s.Draws-s.Failed, s.Draws, s.Failed)
	fmt.Fprintf(w, "%s bootstrap, block length %.3g, seed %d; quantiles Hyndman–Fan type %d; intervals are percentile intervals\n\n",
		s.Method, s.BlockLength, s.Seed, s.QuantileType)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "channel\tROI median\t80% interval\t90% interval\tmROI median\t80% interval\t90% interval\t")
	for _, c := range s.Channels {
		fmt.Fprintf(tw, "%s\t%.2f\t%.2f – %.2f\t%.2f – %.2f\t%.2f\t%.2f – %.2f\t%.2f – %.2f\t\n", c.Name,
			c.ROI.Median, c.ROI.P10, c.ROI.P90, c.ROI.P05, c.ROI.P95,
			c.MROI.Median, c.MROI.P10, c.MROI.P90, c.MROI.P05, c.MROI.P95)
	}
	tw.Flush()
	fmt.Fprintln(w, "\nthe bands measure how much the fit moves under resampling; they do not cover a wrong model form")
}

// writeBandsCSV writes the response bands, one row per channel and spend
// level.
func writeBandsCSV(w io.Writer, rb []uncertainty.ChannelResponse) error {
	cw := csv.NewWriter(w)
	if err := cw.Write([]string{"channel", "spend", "response_median", "response_p10", "response_p90", "response_p05", "response_p95"}); err != nil {
		return err
	}
	num := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	for _, c := range rb {
		for _, p := range c.Points {
			if err := cw.Write([]string{c.Name, num(p.Spend), num(p.Median), num(p.P10), num(p.P90), num(p.P05), num(p.P95)}); err != nil {
				return err
			}
		}
	}
	cw.Flush()
	return cw.Error()
}
