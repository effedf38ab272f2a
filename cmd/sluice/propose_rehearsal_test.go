package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"sluice/model"
	"sluice/optimize"
	"sluice/policies"
	"sluice/rehearsal"
)

// TestProposeMatchesRehearsalWorld writes a rehearsal world's panel to a
// file, runs `sluice propose` on it with the world's seed and sizes, and
// requires the decision the rehearsal scored for that world: the same
// verdict and, to the cent, the same approved plan. Both call the one
// pipeline (package decision), both with the effectiveness choice that
// propose runs by default; this shows nothing differs in the wiring.
func TestProposeMatchesRehearsalWorld(t *testing.T) {
	dir := t.TempDir()
	cols := model.Columns{KPI: "revenue", Channels: []string{"search", "social", "tv", "online_video", "display", "audio"},
		Controls: []string{"price_index", "promo"}}
	panel, err := model.LoadPanel("../../examples/weekly.csv", cols)
	if err != nil {
		t.Fatal(err)
	}
	spec := model.NewSpec(cols.Channels, cols.Controls)
	design, err := model.NewDesign(panel, spec)
	if err != nil {
		t.Fatal(err)
	}
	plan, err := optimize.LoadPlan("../../examples/plan.yaml")
	if err != nil {
		t.Fatal(err)
	}
	pol, err := policies.Resolve("standard")
	if err != nil {
		t.Fatal(err)
	}
	prob := rehearsal.Problem{Panel: panel, Design: design, Plan: plan, Policies: []*policies.Policy{pol}}
	set := rehearsal.Settings{Seed: 11, Worlds: 1, BaseDraws: 4, WorldDraws: 24, Replicates: 20, Workers: 2, EffectChoice: true}
	ctx := context.Background()
	res, err := rehearsal.Run(ctx, prob, set)
	if err != nil {
		t.Fatal(err)
	}
	o := res.Worlds[0]
	if o.Err != "" {
		t.Fatalf("the world failed: %s", o.Err)
	}
	w, err := rehearsal.WorldOf(ctx, prob, set, 0)
	if err != nil {
		t.Fatal(err)
	}
	data := filepath.Join(dir, "world.csv")
	var csvData bytes.Buffer
	if err := writePanelCSV(&csvData, w.Panel); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(data, csvData.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	recDir := filepath.Join(dir, "out")
	var stdout, stderr bytes.Buffer
	args := []string{"sluice", "propose", "--data", data, "--kpi", "revenue", "--channels", strings.Join(cols.Channels, ","),
		"--controls", strings.Join(cols.Controls, ","), "--plan", "../../examples/plan.yaml", "--policy", "standard",
		"--seed", strconv.FormatUint(w.Seed, 10), "--bootstrap-draws", "24", "--workers", "2", "--quiet", "--out", recDir}
	if code := run(args, &stdout, &stderr); code != 0 {
		t.Fatalf("propose exited %d: %s", code, stderr.String())
	}
	b, err := os.ReadFile(filepath.Join(recDir, "decision.json"))
	if err != nil {
		t.Fatal(err)
	}
	var rec struct {
		Verdict      string    `json:"verdict"`
		ApprovedPlan []float64 `json:"approved_plan"`
	}
	if err := json.Unmarshal(b, &rec); err != nil {
		t.Fatal(err)
	}
	got := o.Policies[0]
	if rec.Verdict != string(got.Verdict) {
		t.Errorf("propose's verdict %s, the rehearsal world's %s", rec.Verdict, got.Verdict)
	}
	if len(rec.ApprovedPlan) != len(got.Plan) {
		t.Fatalf("propose approved %d channels, the world %d", len(rec.ApprovedPlan), len(got.Plan))
	}
	for k := range got.Plan {
		if d := rec.ApprovedPlan[k] - got.Plan[k]; d > 0.005 || d < -0.005 {
			t.Errorf("%s: propose approved %.2f a week, the rehearsal world %.2f", cols.Channels[k], rec.ApprovedPlan[k], got.Plan[k])
		}
	}
	t.Logf("world 0 (%s): verdict %s, approved %v", o.Kind, got.Verdict, got.Plan)
}
