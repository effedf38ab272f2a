package gate

import (
	"fmt"
	"testing"
)

// benchReview is the benchmark's problem: 12 channels, 1000 draws, half
// moving up and half down by 10–35%, with draws wide enough that most safe
// steps stop short of the proposal and the plan is downsized.
func benchReview(b testing.TB) Review {
	var specs []channelSpec
	var proposed []float64
	for k := range 12 {
		cur := 4000 + 1000*float64(k)
		s := channelSpec{name: fmt.Sprintf("ch%02d", k), current: cur, high: 1.3 * cur,
			roi: 1.0 + 0.05*float64(k), roiSD: 0.1 + 0.02*float64(k%4), halfSat: 1, shape: 1.5 + 0.1*float64(k%5),
			lambda: 0.2 + 0.05*float64(k%6), exp: k%3 == 2}
		specs = append(specs, s)
		change := (0.10 + 0.05*float64(k%6)) * cur
		if k < 6 {
			change = -change
		}
		proposed = append(proposed, cur+change)
	}
	// Make it budget-neutral: scale the cuts to the increases.
	var up, down float64
	for k, w := range proposed {
		if d := w - specs[k].current; d > 0 {
			up += d
		} else {
			down -= d
		}
	}
	for k := range 6 {
		proposed[k] = specs[k].current + (proposed[k]-specs[k].current)*up/down
	}
	return makeReview(specs, proposed, 1000, 7, preset(b, "standard"))
}

func BenchmarkRun1000x12(b *testing.B) {
	r := benchReview(b)
	d, err := Run(r, Settings{})
	if err != nil {
		b.Fatal(err)
	}
	steps := 0
	for _, m := range d.Moves {
		if m.SafeStep < 1 {
			steps++
		}
	}
	if d.Verdict != Downsize || steps < 6 {
		b.Fatalf("benchmark problem changed: verdict %s, %d steps short of the proposal", d.Verdict, steps)
	}
	b.ResetTimer()
	for b.Loop() {
		if _, err := Run(r, Settings{}); err != nil {
			b.Fatal(err)
		}
	}
}
