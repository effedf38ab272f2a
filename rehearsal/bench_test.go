package rehearsal

import (
	"context"
	"testing"
)

// BenchmarkDecideWorld is the cost of one world with the default sizes
// (fit, 60 bootstrap refits, validation with 8 recovery panels, two
// allocations, one gate) on the demo data.
func BenchmarkDecideWorld(b *testing.B) {
	p := demoProblem(b, "standard")
	s := Settings{Seed: 5, Workers: 2}.withDefaults()
	fit, err := p.Design.Fit(p.Panel.KPI, fitSettingsForTest())
	if err != nil {
		b.Fatal(err)
	}
	base := &base{panel: p.Panel, design: p.Design, draws: []Params{fit.Params}, resid: fit.Residuals, block: 4, horiz: p.Plan.HorizonWeeks}
	w := base.world(5, 0, 0, nil)
	for b.Loop() {
		if _, err := decideWorld(context.Background(), p, s, w); err != nil {
			b.Fatal(err)
		}
	}
}
