package decision

import (
	"fmt"
	"strings"

	"sluice/model"
	"sluice/record"
	"sluice/validation"
)

// chooseEffect runs the effectiveness evidence (validation.Effectiveness,
// drifting kind) on d and returns the design the decision uses, the
// record's account of the choice and the evidence. When the evidence
// prefers a drifting effectiveness, the channels it names as changed
// drift in the returned design. When draws are given (fixed is true) the
// design is the draws' and is kept; a note says what the evidence
// preferred. A design that already has varying channels (the user's spec
// or flags) is kept as it is, without the evidence.
func chooseEffect(d *model.Design, y []float64, s Settings, fixed bool) (*model.Design, *record.EffectChoice, *validation.EffectResult, error) {
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
		return d, ch, nil, nil
	}
	ev, err := validation.Effectiveness(d, y, validation.EffectSettings{Seed: s.Seed, Workers: s.Workers, Replicates: s.EffectReplicates})
	if err != nil {
		return nil, nil, nil, err
	}
	ch := &record.EffectChoice{Model: model.EffectConstant, Preferred: ev.Prefer, BacktestRatio: ev.BacktestRatio}
	var named []string
	for _, c := range ev.Channels {
		ch.Changes = append(ch.Changes, record.EffectChange{Channel: c.Name, Change: c.Change, Low: c.Low, High: c.High, Z: c.Z, Named: c.Changed})
		if c.Changed {
			named = append(named, c.Name)
		}
	}
	ratio := "no backtest (history too short)"
	if len(ev.Origins) > 0 {
		ratio = fmt.Sprintf("backtest RMSE ratio drifting/constant %.3f over %d origins", ev.BacktestRatio, len(ev.Origins))
	}
	why := fmt.Sprintf("drifting fit with %d of %d bootstrap refits, channels named when |z| > %.2f (family-wise false-alarm share %.0f%%); %s",
		ev.Replicates, ev.Tried, ev.ZCrit, 100*ev.Alpha, ratio)
	if len(ev.Notes) > 0 {
		why += "; " + strings.Join(ev.Notes, "; ")
	}
	switch {
	case ev.Prefer != model.EffectDrifting:
		if len(named) == 0 {
			ch.Evidence = "no channel's effectiveness changed beyond chance: " + why
		} else {
			ch.Evidence = "changes named in " + strings.Join(named, ", ") + " but the drifting specification does not forecast the last weeks better: " + why
		}
		return d, ch, ev, nil
	case fixed:
		ch.Evidence = "the draws file fixes the specification: " + why
		ch.Note = fmt.Sprintf("the evidence prefers a drifting effectiveness for %s, but the given draws are of the constant model and were used as they are",
			strings.Join(named, ", "))
		return d, ch, ev, nil
	}
	dd, err := d.WithDrifting(named)
	if err != nil {
		return nil, nil, nil, err
	}
	ch.Model, ch.Channels = model.EffectDrifting, named
	ch.Evidence = "effectiveness changed in " + strings.Join(named, ", ") + " and the drifting specification forecasts the last weeks at least as well: " + why
	return dd, ch, ev, nil
}
