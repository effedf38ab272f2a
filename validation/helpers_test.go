package validation

import (
	"testing"

	"sluice/model"
)

// simulate draws the truth in path, with its seed replaced when seed != 0.
func simulate(t testing.TB, path string, seed uint64) *model.Simulated {
	t.Helper()
	tr, err := model.LoadTruth(path)
	if err != nil {
		t.Fatal(err)
	}
	if seed != 0 {
		tr.Seed = seed
	}
	sim, err := model.Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	return sim
}

func design(t testing.TB, sim *model.Simulated) *model.Design {
	t.Helper()
	d, err := model.NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// failing returns the checks with status st, optionally of one family.
func withStatus(ev Evidence, st Status, fam Family) []Check {
	var out []Check
	for _, c := range ev.Checks {
		if c.Status == st && (fam == "" || c.Family == fam) {
			out = append(out, c)
		}
	}
	return out
}

func logChecks(t testing.TB, ev Evidence) {
	t.Helper()
	for _, c := range ev.Checks {
		t.Logf("%-4s %-31s %-8s %10.4g  %s", c.Status, c.Name, c.Scope, c.Metric, c.Detail)
	}
}
