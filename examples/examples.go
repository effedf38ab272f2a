// Package examples holds the demo scenario, Fernhill Tea Co.: an invented
// company with three years of weekly data, embedded so that `sluice demo`
// runs on a fresh clone. Nothing in it is real.
package examples

import "embed"

// Files holds the scenario's inputs: weekly.csv (the panel), truth.yaml
// (the invented truth it was simulated from), and the plan, policy and lift
// tests the demo uses.
//
//go:embed *.csv *.yaml
var Files embed.FS

// Channels and controls of the scenario, in the panel's column order.
var (
	Channels = []string{"search", "social", "tv", "online_video", "display", "audio"}
	Controls = []string{"price_index", "promo"}
)

// KPI is the scenario's KPI column.
const KPI = "revenue"
