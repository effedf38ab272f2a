package decision

import (
	"fmt"
	"strings"

	"sluice/model"
	"sluice/record"
	"sluice/validation"
)

// chooseEffect runs the effectiveness evidence (validation.EffectEvidence:
// drifting, then seasonal) on d and returns the design the decision uses,
// the record's account of the choice and the evidence it rests on. When
// the evidence prefers a varying effectiveness (validation.ChooseEffect),
// the channels it names as changed vary in the returned design, drifting
// or seasonal. When draws are given (fixed is true) the design is the
// draws' and is kept; a note says what the evidence preferred. A design
// that already has varying channels (the user's spec or flags) is kept as
// it is, without the evidence. The checks are the decision's
// effect/modelled checks on the returned design (validation.ModelledChecks;
// none when the evidence did not run).
func chooseEffect(d *model.Design, y []float64, s Settings, fixed bool) (*model.Design, *record.EffectChoice, *validation.EffectResult, []validation.Check, error) {
	if d.Spec.AnyDrifting() {
		ch := &record.EffectChoice{Model: model.EffectDrifting, Evidence: "set by the model specification (spec file or --drifting/--seasonal); the evidence was not run"}
		for _, c := range d.Spec.Channels {
			if c.Varying() {
				ch.Channels = append(ch.Channels, c.Name)
				if c.Seasonal() {
					ch.Model = model.EffectSeasonal
				}
			}
		}
		return d, ch, nil, nil, nil
	}
	evs, err := validation.EffectEvidence(d, y, validation.EffectSettings{Seed: s.Seed, Workers: s.Workers, Replicates: s.EffectReplicates})
	if err != nil {
		return nil, nil, nil, nil, err
	}
	ch := &record.EffectChoice{Model: model.EffectConstant, Preferred: model.EffectConstant}
	var whys []string
	for _, ev := range evs {
		whys = append(whys, effectWhy(ev))
		for _, c := range ev.Channels {
			ch.Changes = append(ch.Changes, record.EffectChange{Kind: ev.Kind, Channel: c.Name, Change: c.Change, Low: c.Low, High: c.High, Z: c.Z, Named: c.Changed})
		}
	}
	why := strings.Join(whys, "; ")
	ev := validation.ChooseEffect(evs)
	if ev == nil {
		// Neither kind is preferred: the evidence kept is the drifting
		// one's, the kind a change over the history shows in.
		ev = evs[0]
		ch.BacktestRatio = ev.BacktestRatio
		var named []string
		for _, e := range evs {
			for _, n := range e.Named() {
				named = append(named, n+" ("+e.Kind+")")
			}
		}
		if len(named) == 0 {
			ch.Evidence = "no channel's effectiveness changed beyond chance: " + why
		} else {
			ch.Evidence = "changes named in " + strings.Join(named, ", ") + " but the varying specification does not forecast the last weeks better: " + why
		}
		return d, ch, ev, validation.ModelledChecks(evs, d), nil
	}
	named := ev.Named()
	ch.Preferred, ch.BacktestRatio = ev.Kind, ev.BacktestRatio
	if fixed {
		ch.Evidence = "the draws file fixes the specification: " + why
		ch.Note = fmt.Sprintf("the evidence prefers a %s effectiveness for %s, but the given draws are of the constant model and were used as they are",
			ev.Kind, strings.Join(named, ", "))
		return d, ch, ev, validation.ModelledChecks(evs, d), nil
	}
	var dv *model.Design
	if ev.Kind == model.EffectSeasonal {
		dv, err = d.WithSeasonal(named)
	} else {
		dv, err = d.WithDrifting(named)
	}
	if err != nil {
		return nil, nil, nil, nil, err
	}
	ch.Model, ch.Channels = ev.Kind, named
	ch.Evidence = fmt.Sprintf("effectiveness %s in %s and that specification forecasts the last weeks at least as well as the constant one: %s",
		verbOf(ev.Kind), strings.Join(named, ", "), why)
	return dv, ch, ev, validation.ModelledChecks(evs, dv), nil
}

// effectWhy is one kind's evidence in a line: refits, test, backtest.
func effectWhy(ev *validation.EffectResult) string {
	if ev.Tried == 0 {
		return ev.Kind + ": " + strings.Join(ev.Notes, "; ")
	}
	what := fmt.Sprintf("each channel's last %d weeks over its history", ev.RecentWeeks)
	if ev.Kind == model.EffectSeasonal {
		what = "each channel's next weeks over its yearly average"
	}
	ratio := "no backtest (history too short)"
	if len(ev.Origins) > 0 {
		ratio = fmt.Sprintf("backtest RMSE ratio %s/constant %.3f over %d origins", ev.Kind, ev.BacktestRatio, len(ev.Origins))
	}
	out := fmt.Sprintf("%s fit with %d of %d bootstrap refits, %s tested against %d panels simulated without any change, named when |z| > %.2f (family-wise false-alarm share %.0f%%); %s",
		ev.Kind, ev.Replicates, ev.Tried, what, ev.NullPanels, ev.ZCrit, 100*ev.Alpha, ratio)
	if len(ev.Notes) > 0 {
		out += "; " + strings.Join(ev.Notes, "; ")
	}
	return out
}

func verbOf(kind string) string {
	if kind == model.EffectSeasonal {
		return "follows the season"
	}
	return "changed"
}
