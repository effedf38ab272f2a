package rehearsal

import (
	"encoding/json"
	"testing"

	"sluice/model"
	"sluice/optimize"
	"sluice/policies"
)

// demoProblem loads the demo data and plan (copied from examples/) with the
// usual spec and the given policies.
func demoProblem(t testing.TB, pols ...string) Problem {
	t.Helper()
	cols := model.Columns{KPI: "revenue",
		Channels: []string{"search", "social", "tv", "online_video", "display", "audio"},
		Controls: []string{"price_index", "promo"}}
	p, err := model.LoadPanel("testdata/weekly.csv", cols)
	if err != nil {
		t.Fatal(err)
	}
	d, err := model.NewDesign(p, model.NewSpec(cols.Channels, cols.Controls))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := optimize.LoadPlan("testdata/plan.yaml")
	if err != nil {
		t.Fatal(err)
	}
	prob := Problem{Panel: p, Design: d, Plan: plan}
	for _, name := range pols {
		pol, err := policies.Resolve(name)
		if err != nil {
			t.Fatal(err)
		}
		prob.Policies = append(prob.Policies, pol)
	}
	return prob
}

// Params is model.Params, short for the tests.
type Params = model.Params

func fitSettingsForTest() model.FitSettings { return model.FitSettings{Seed: 1, Workers: 2} }

// resultJSON is r with its worlds as JSON, for byte-for-byte comparisons
// of two runs.
func resultJSON(t *testing.T, r *Result) []byte {
	t.Helper()
	b, err := json.Marshal(struct {
		R *Result
		W []Outcome
	}{r, r.Worlds})
	if err != nil {
		t.Fatal(err)
	}
	return b
}
