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

// BenchmarkDecideDriftWorld is the cost of a drift world whose
// effectiveness choice switches (world 10 of seed 16 on the demo data:
// search ×1.63 over the last third; the choice lets search drift), at the
// rehearsal's default sizes: "choice" decides it with the choice and again
// without it (the with/without comparison), "constant" only without it.
func BenchmarkDecideDriftWorld(b *testing.B) {
	p := demoProblem(b, "standard")
	ctx := context.Background()
	s := Settings{Seed: 16, Misspecified: 1, Kinds: []Kind{Drift}, BaseDraws: 20, Workers: 2}.withDefaults()
	base, err := newBase(ctx, p, s)
	if err != nil {
		b.Fatal(err)
	}
	w := base.world(s.Seed, 10, s.Misspecified, s.Kinds)
	for _, choice := range []bool{true, false} {
		name := "constant"
		if choice {
			name = "choice"
		}
		b.Run(name, func(b *testing.B) {
			s := s
			s.EffectChoice = choice
			for b.Loop() {
				o, err := decideWorld(ctx, p, s, w)
				if err != nil {
					b.Fatal(err)
				}
				if choice && o.Without == nil {
					b.Fatal("the choice did not switch in this world")
				}
			}
		})
	}
}
