package main

import (
	"sluice/model"
)

// applyEvents adds the event indicators of --events FILE, or else of the
// spec file's events list, to the panel and the spec's controls. It
// returns the events file and its SHA-256 when one was read ("" else: a
// spec's events are hashed with the spec).
func applyEvents(o *opts, p *model.Panel, spec *model.Spec, specEvents []model.Event, specPath string) (path, sha string, err error) {
	events, source := specEvents, specPath
	if path = o.String("events"); path != "" {
		if events, err = model.LoadEvents(path); err != nil {
			return "", "", err
		}
		if sha, err = sha256File(path); err != nil {
			return "", "", err
		}
		source = path
	}
	if len(events) == 0 {
		return path, sha, nil
	}
	names, err := model.AddEvents(p, events, source)
	if err != nil {
		return "", "", withHint(err, "see README, \"Event weeks\"")
	}
	spec.Controls = append(spec.Controls, names...)
	return path, sha, nil
}
