package uncertainty

import (
	"strings"
	"testing"

	"sluice/model"
)

// Bound shares and notes on hand-made draws whose counts are known by
// construction: 4 successful replicates, decay on its upper bound in 3
// (75%), half saturation on its lower bound in 1 (25%, not above the note
// threshold), shape fixed by its box (not counted), 2 failed of 6 (33%);
// the full fit's decay sits on its upper bound.
func TestOnBoundAndNotes(t *testing.T) {
	h := Header{Model: ModelInfo{Channels: []ChannelInfo{{Name: "search", Adstock: "geometric", Saturation: "hill",
		Decay: []float64{0, 0.85}, HalfSaturation: []float64{0.05, 10}, Shape: []float64{2, 2}}}},
		BlockRule: &RegressionBlock{Lag1: 0.9, Rule: 20, Cap: 11, Capped: true, Length: 11},
		FullFit:   FullFit{Params: model.Params{Channels: []model.ChannelParams{{Decay: 0.85, HalfSat: 1, Shape: 2, Beta: 1}}}}}
	rep := func(i int, decay, kappa float64) Replicate {
		p := model.Params{Channels: []model.ChannelParams{{Decay: decay, HalfSat: kappa, Shape: 2, Beta: 1}}, Fixed: []float64{1}}
		return Replicate{Index: i, Params: &p, Attempts: 1}
	}
	d := &Draws{Header: h, Replicates: []Replicate{rep(0, 0.85, 1), rep(1, 0.85, 0.05), rep(2, 0.4, 2), rep(3, 0.85, 3),
		{Index: 4, Failed: true}, {Index: 5, Failed: true}}}
	b := d.OnBound()
	if len(b) != 1 || b[0].Decay != 0.75 || b[0].HalfSaturation != 0.25 || b[0].Shape != -1 || b[0].Any != 0.75 {
		t.Fatalf("bound shares %+v, want decay 0.75, half_saturation 0.25, shape -1 (fixed), any 0.75", b)
	}
	notes := d.Notes()
	var text []string
	for _, n := range notes {
		text = append(text, n.Text)
		if n.Hint == "" {
			t.Errorf("note without a hint: %q", n.Text)
		}
	}
	all := strings.Join(text, "\n")
	for _, want := range []string{"2 of 6 bootstrap refits failed (33%)", "held at its cap of 11 weeks", "channel search: replicates on a bound of the box: decay 75%;",
		"the full fit has channel search on a bound of its box: decay 0.85 (box [0, 0.85])"} {
		if !strings.Contains(all, want) {
			t.Errorf("notes lack %q:\n%s", want, all)
		}
	}
	if len(notes) != 4 || strings.Contains(all, "half_saturation") || strings.Contains(all, "shape") {
		t.Errorf("want exactly the four notes, got:\n%s", all)
	}
}
