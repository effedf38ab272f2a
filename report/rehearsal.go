package report

import (
	"bytes"
	"errors"
	"fmt"
	"html/template"
	"io"
	"slices"
	"strconv"
	"strings"

	"sluice/internal/atomicfile"
	"sluice/record"
	"sluice/rehearsal"
)

// ErrNoRehearsal is returned when there is no rehearsal to render.
var ErrNoRehearsal = errors.New("report: no rehearsal result")

// RenderRehearsal writes the rehearsal page for r to w: what was
// simulated, each way of deciding summed up over the worlds, the trade-off
// between protection and captured gain, the spread of true gains and the
// results by kind of world. Nothing is written when an error is returned.
func RenderRehearsal(w io.Writer, r *rehearsal.Result) error {
	if r == nil {
		return ErrNoRehearsal
	}
	decided := 0
	for _, o := range r.Worlds {
		if o.Err == "" {
			decided++
		}
	}
	if decided == 0 {
		return fmt.Errorf("report: no world of the rehearsal was decided (%d failed); a page would summarize nothing", len(r.Worlds))
	}
	v, err := newRehearsalView(r)
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := rehearsalTemplate.Execute(&buf, v); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	_, err = buf.WriteTo(w)
	return err
}

// WriteRehearsal renders the rehearsal page into the file at path,
// atomically; on error the file is left as it was.
func WriteRehearsal(path string, r *rehearsal.Result) error {
	var buf bytes.Buffer
	if err := RenderRehearsal(&buf, r); err != nil {
		return err
	}
	return atomicfile.Write(path, buf.Bytes(), 0o644)
}

type rehearsalView struct {
	Title, Intro, Caution string
	Facts                 []string
	Summary               []summaryRow
	TradeoffChart         template.HTML // "" when there is nothing to draw
	TradeoffCaption       string
	GainsChart            template.HTML
	GainsCaption          string
	Deciders              []string // column groups of the kind table
	Kinds                 []kindRow
	Errors                string
	Failures              []string // per stage: count and the first reasons
	CheckKinds            []string // misspecified kinds with a power column
	CheckRows             []checkRow
	Loud                  string // a warning when more than a tenth of the worlds failed
	// With and without the effectiveness choice, per kind of world
	// (rehearsal.Result.Effect); empty when the rehearsal ran without it.
	EffectDeciders []string
	EffectRows     []kindRow // Failed holds the switched count
	DriftDrawn     string
}

type summaryRow struct {
	Name, Worlds, PLoss, Mean, P05, Oracle, Refused string
}

// checkRow is one check's stated and realised false-alarm rate and power.
type checkRow struct {
	Name, Stated, Realised string
	Power                  []string // per CheckKinds
}

type kindRow struct {
	Kind, Worlds, Failed string
	Cells                []string // P(loss), of oracle, per decider
}

// decider is one way of deciding: the raw proposal or a policy.
type decider struct {
	name  string
	sum   *rehearsal.Summary
	gains []float64 // true gain in each world that could be decided
}

func deciders(r *rehearsal.Result) []decider {
	ds := []decider{{name: "raw proposal", sum: &r.Raw}}
	for i := range r.Policies {
		ds = append(ds, decider{name: "policy " + r.Policies[i].Name, sum: &r.Policies[i]})
	}
	for _, o := range r.Worlds {
		if o.Err != "" || len(o.Policies) != len(r.Policies) {
			continue
		}
		ds[0].gains = append(ds[0].gains, o.Raw.TrueGain)
		for j, s := range o.Policies {
			ds[j+1].gains = append(ds[j+1].gains, s.TrueGain)
		}
	}
	return ds
}

func newRehearsalView(r *rehearsal.Result) (*rehearsalView, error) {
	ds := deciders(r)
	n, wrong := 0, 0
	var kinds []string
	for _, o := range r.Worlds {
		n++
		if o.Kind != rehearsal.WellSpecified {
			wrong++
			if !slices.Contains(kinds, string(o.Kind)) {
				kinds = append(kinds, string(o.Kind))
			}
		}
	}
	slices.Sort(kinds)
	weeks := plural(r.Sizes.Horizon, "week", "weeks")
	v := &rehearsalView{
		Title:   "Rehearsal of the decision policies",
		Caution: record.Caution,
		Facts: []string{plural(n, "world", "worlds"), "seed " + strconv.FormatUint(r.Seed, 10), "horizon " + weeks,
			plural(len(r.Policies), "policy", "policies")},
	}
	broke := "none broke an assumption of the model"
	if wrong > 0 {
		broke = fmt.Sprintf("%d of them (%s) broke one assumption of the model: %s", wrong,
			pct(float64(wrong)/float64(max(n, 1))), joinAnd(kinds))
	}
	v.Intro = fmt.Sprintf("Each of the %s below was simulated from the fit to your data: parameters from one of %s of the data, "+
		"the real spend history and resampled residuals of the real fit; %s. In every world the whole decision ran again "+
		"(fit, a bootstrap of %s, validation with %s, allocation, gate), and each plan is scored by its true gain over %s "+
		"against keeping the current spend, which only a simulation can know. The oracle is the best plan under the world's truth "+
		"with the same constraints. Seed %d reproduces every world.",
		plural(n, "world", "worlds"), plural(r.Sizes.BaseDraws, "bootstrap draw", "bootstrap draws"), broke,
		plural(r.Sizes.WorldDraws, "draw", "draws"), plural(r.Sizes.Replicates, "recovery panel", "recovery panels"), weeks, r.Seed)
	if r.Errors > 0 {
		v.Errors = fmt.Sprintf("%s of %d could not be decided and are left out of every figure; by stage:",
			plural(r.Errors, "world", "worlds"), r.Errors+r.Decided)
		for _, f := range r.Failures {
			v.Failures = append(v.Failures, fmt.Sprintf("%s: %s — %s", f.Stage, plural(f.Worlds, "world", "worlds"), strings.Join(f.Reasons, "; ")))
		}
	}
	if r.Loud() {
		v.Loud = fmt.Sprintf("%s of the worlds could not be decided (more than %s): the figures below cover only the worlds that could, which may not be like the others.",
			pct(r.FailedShareOfWorlds()), pct(rehearsal.LoudShare))
	}
	for _, d := range ds {
		s := d.sum
		refused := pct(s.Refused)
		if d.sum == &r.Raw {
			refused = "no gate"
		}
		v.Summary = append(v.Summary, summaryRow{Name: d.name, Worlds: strconv.Itoa(s.Worlds), PLoss: pct(s.PLoss),
			Mean: signedMoney(s.MeanGain), P05: signedMoney(s.P05Gain), Oracle: pct(s.OracleShare), Refused: refused})
		v.Deciders = append(v.Deciders, d.name)
	}

	chart, err := tradeoffChart(ds)
	if err != nil {
		return nil, err
	}
	if chart != nil {
		label := "Chance of a losing decision against share of the oracle's gain captured: " + tradeoffWords(ds)
		if v.TradeoffChart, err = inlineSVG(chart, "chart-tradeoff", label); err != nil {
			return nil, err
		}
		v.TradeoffCaption = "Lower is safer, further right captures more of what there was to gain. " + tradeoffWords(ds)
	}
	chart, err = gainsChart(ds, r.Sizes.Horizon)
	if err != nil {
		return nil, err
	}
	if chart != nil {
		label := "Box plots of the true gain over " + weeks + " in each world, one per way of deciding, with zero marked"
		if v.GainsChart, err = inlineSVG(chart, "chart-gains", label); err != nil {
			return nil, err
		}
		v.GainsCaption = "Each box spans the middle half of the worlds' true gains, the line inside is the median, " +
			"the whiskers reach the furthest world within 1.5 box lengths and the circles are worlds beyond them. " +
			"Left of the solid line at zero the decision lost money."
	}

	order := append([]rehearsal.Kind{rehearsal.WellSpecified}, rehearsal.AllKinds...)
	for k := range r.Raw.ByWorldKind {
		if !slices.Contains(order, k) {
			order = append(order, k)
		}
	}
	for _, k := range order {
		raw := r.Raw.ByWorldKind[k]
		if raw == nil {
			continue
		}
		name := string(k)
		if k == rehearsal.WellSpecified {
			name = "none (the model's own form)"
		}
		row := kindRow{Kind: name, Worlds: strconv.Itoa(raw.Worlds), Failed: pct(r.FailedShare[k])}
		for _, d := range ds {
			s := d.sum.ByWorldKind[k]
			if s == nil {
				row.Cells = append(row.Cells, "n/a", "n/a")
				continue
			}
			row.Cells = append(row.Cells, pct(s.PLoss), pct(s.OracleShare))
		}
		v.Kinds = append(v.Kinds, row)
	}
	for i, c := range r.Effect {
		row := kindRow{Kind: string(c.Kind), Worlds: strconv.Itoa(c.Worlds), Failed: strconv.Itoa(c.Switched)}
		for j, d := range c.Deciders {
			if i == 0 {
				name := "policy " + d.Name
				if j == 0 {
					name = "raw proposal"
				}
				v.EffectDeciders = append(v.EffectDeciders, name)
			}
			row.Cells = append(row.Cells, pct(d.With.PLoss), pct(d.With.OracleShare), pct(d.Without.PLoss), pct(d.Without.OracleShare))
		}
		v.EffectRows = append(v.EffectRows, row)
	}
	if d := r.DriftDrawn; d != nil {
		v.DriftDrawn = fmt.Sprintf("The drift worlds drew %d rising and %d falling changes of the affected channel's effectiveness, "+
			"from ×%.2f to ×%.2f between the first and the last week of the history; %d of %d ramped over the last third of the history only.",
			d.Rising, d.Falling, d.Min, d.Max, d.LastThird, d.Worlds)
	}
	for _, k := range rehearsal.AllKinds {
		if slices.ContainsFunc(r.Checks, func(c rehearsal.CheckRate) bool { _, ok := c.Power[k]; return ok }) {
			v.CheckKinds = append(v.CheckKinds, string(k))
		}
	}
	for _, c := range r.Checks {
		row := checkRow{Name: c.Name, Stated: "not a test", Realised: "n/a"}
		if c.Stated > 0 {
			row.Stated = pct(c.Stated)
		}
		if c.Worlds > 0 {
			row.Realised = pct(c.FalseAlarm)
		}
		for _, k := range v.CheckKinds {
			if p, ok := c.Power[rehearsal.Kind(k)]; ok {
				row.Power = append(row.Power, pct(p))
			} else {
				row.Power = append(row.Power, "n/a")
			}
		}
		v.CheckRows = append(v.CheckRows, row)
	}
	return v, nil
}

// tradeoffWords says in words where each decider sits on the chart.
func tradeoffWords(ds []decider) string {
	w := make([]string, len(ds))
	for i, d := range ds {
		w[i] = fmt.Sprintf("%s loses in %s of worlds and captures %s", d.name, pct(d.sum.PLoss), pct(d.sum.OracleShare))
	}
	s := strings.Join(w, "; ") + "."
	return strings.ToUpper(s[:1]) + s[1:] // decider names start with ASCII "raw"
}
