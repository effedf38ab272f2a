package decision

import (
	"context"
	"testing"
)

// BenchmarkPrepare is one decision's preparation (fit, bootstrap of 60,
// validation, allocation) on the simulated 156-week, two-channel panel
// with search drifting (effectWorld), with and without the effectiveness
// choice: the choice's cost. Run:
// go test ./decision -run '^$' -bench Prepare -benchtime 1x -count 5 -cpu 2
func BenchmarkPrepare(b *testing.B) {
	panel, d, plan := effectWorld(b, 1.0)
	for _, bc := range []struct {
		name   string
		choice bool
	}{{"constant", false}, {"effect-choice", true}} {
		b.Run(bc.name, func(b *testing.B) {
			for b.Loop() {
				if _, err := Prepare(context.Background(), Input{Panel: panel, Design: d, Plan: plan},
					Settings{Seed: 7, Workers: 2, BootstrapDraws: 60, EffectChoice: bc.choice}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
