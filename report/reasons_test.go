package report

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg/draw"

	"sluice/gate"
	"sluice/policies"
	"sluice/validation"
)

// TestSettingReason: the reason the brief puts beside a channel's approved
// spend must be true of that number. The cases are the two the brief got
// wrong before (a ±10% band beside an approved spend equal to current,
// "held to a change of 3,428/week" beside a change of 0) and the cases
// where the gate's reason does set the number. The expected phrases are
// read off the invented numbers by hand.
func TestSettingReason(t *testing.T) {
	band := "check stability/quarter_out (stability) failed: ROI 3.32; warn above 25%; the policy holds video within ±10% of current spend (20,293 to 24,802/week for video)"
	hold := "check recovery/roi_error (recovery) failed: median |error| 59%; the policy does not move a channel whose recovery check failed"
	capCheck := gate.CheckUse{Check: validation.Check{Name: "stability/quarter_out", Family: validation.Stability, Scope: "video", Status: validation.Fail, Detail: "ROI 3.32; warn above 25%"}, Action: policies.Cap}
	holdCheck := gate.CheckUse{Check: validation.Check{Name: "recovery/roi_error", Family: validation.Recovery, Scope: "video", Status: validation.Fail, Detail: "median |error| 59%"}, Action: policies.Hold}
	tests := []struct {
		name   string
		move   gate.Move
		checks []gate.CheckUse
		want   string // prefix of the phrase
		index  int
	}{
		{"as proposed", gate.Move{Channel: "search", Current: 100, Proposed: 150, Approved: 150}, nil, "as proposed", -1},
		{"no change proposed", gate.Move{Channel: "search", Current: 100, Proposed: 100, Approved: 100}, nil, "no change proposed", -1},
		{"band not binding, hold is", gate.Move{Channel: "video", Current: 22547, Proposed: 33821, Approved: 22547, Reasons: []string{band, hold}},
			[]gate.CheckUse{capCheck, holdCheck}, "kept at current spend: check recovery/roi_error failed", 1},
		{"band binding at its edge", gate.Move{Channel: "video", Current: 22547, Proposed: 33821, Approved: 24802, Reasons: []string{band}},
			[]gate.CheckUse{capCheck}, "check stability/quarter_out (stability) failed", 0},
		{"held-to figure differs from the change", gate.Move{Channel: "tv", Current: 57349, Proposed: 37455, Approved: 57349,
			Reasons: []string{"held to a change of 3,428/week because the channels on the other side are capped: cuts are held to what the increases need"}},
			nil, "kept at current spend; the gate's reasons", -1},
		{"held-to figure is the change", gate.Move{Channel: "tv", Current: 57349, Proposed: 37455, Approved: 40509,
			Reasons: []string{"held to a change of 16,840/week because the channels on the other side are capped: cuts are held to what the increases need"}},
			nil, "held to a change of 16,840/week because the channels on the other side are capped", 0},
		{"risk step binding", gate.Move{Channel: "social", Current: 30000, Proposed: 55000, Approved: 48000,
			Reasons: []string{"moving more than 18,000/week into social (funded from search) has a 14% chance of losing money (the policy allows 10%); at most 18,000/week meets the policy"}},
			nil, "moving more than 18,000/week into social", 0},
		{"nothing matches: the brief's own words", gate.Move{Channel: "social", Current: 30000, Proposed: 55000, Approved: 40000,
			Reasons: []string{"at most 18,000/week meets the policy"}},
			nil, "40% of the proposed move approved", -1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, idx := settingReason(tt.move, tt.checks)
			if !strings.HasPrefix(got, tt.want) || idx != tt.index {
				t.Errorf("settingReason = %q, %d; want %q..., %d", got, idx, tt.want, tt.index)
			}
		})
	}
}

// TestCountTicks: a count axis is labelled with whole numbers only, for
// ranges where gonum's default ticks fall on halves (0 to 5) and below one.
func TestCountTicks(t *testing.T) {
	for _, r := range [][2]float64{{0, 5}, {0, 3}, {0, 1.2}, {0, 54}, {0, 0.8}} {
		ts := countTicks{}.Ticks(r[0], r[1])
		labelled := 0
		for _, tk := range ts {
			if tk.Value != math.Trunc(tk.Value) {
				t.Errorf("range %v: tick at %v is not a whole number", r, tk.Value)
			}
			if tk.Label != "" {
				labelled++
			}
		}
		if labelled == 0 {
			t.Errorf("range %v: no labelled tick", r)
		}
	}
}

// TestOneMeaningPerMarker: the rehearsal page draws the raw proposal with
// the brief's proposal marker and every policy with a marker the brief
// does not use (there the disc is current spend and the cross the
// approved plan).
func TestOneMeaningPerMarker(t *testing.T) {
	if glyphFor(0) != proposedGlyph {
		t.Errorf("the raw proposal is not drawn with the brief's proposal marker")
	}
	seen := map[draw.GlyphStyle]int{}
	for i := 1; i < len(deciderGlyphs); i++ {
		g := glyphFor(i)
		for _, used := range []draw.GlyphStyle{currentGlyph, proposedGlyph, approvedGlyph} {
			if g.Shape == used.Shape || g.Color == used.Color {
				t.Errorf("policy %d shares a shape or colour with a brief marker", i)
			}
		}
		if j, ok := seen[g]; ok {
			t.Errorf("policies %d and %d share a marker", j, i)
		}
		seen[g] = i
	}
}
