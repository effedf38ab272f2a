package model

import (
	"math"
	"testing"
	"time"
)

// runs returns the lengths of the maximal runs of zero and of non-zero
// values of x, leaving out the first and the last run (cut by the edges).
func runs(x []float64) (on, off []int) {
	start := 0
	for i := 1; i <= len(x); i++ {
		if i < len(x) && (x[i] == 0) == (x[start] == 0) {
			continue
		}
		if start > 0 && i < len(x) {
			if x[start] == 0 {
				off = append(off, i-start)
			} else {
				on = append(on, i-start)
			}
		}
		start = i
	}
	return on, off
}

// The shapes the corpus needs, checked by counting runs in the drawn spend
// (the truth file states the bounds; the counting is independent of the
// generator): bursts of 3–6 weeks between 8–20 dark weeks; exactly zero
// before a launch week; spend multiplied in holiday weeks, which the
// Gregorian calendar places (2023-11-20 and 2023-12-18 are Mondays inside
// 15 Nov–24 Dec; 2023-12-25 and 2023-11-13 are outside).
func TestSpendShapes(t *testing.T) {
	tr := &Truth{Seed: 11, Weeks: 156, Intercept: 1000, Channels: []TrueChannel{
		{Name: "tv", MeanSpend: 5000, Decay: 0.5, HalfSat: 1, Beta: 100, SpendShape: SpendShape{Flight: [2]int{3, 6}, Gap: [2]int{8, 20}}},
		{Name: "retail_media", MeanSpend: 2000, Decay: 0.2, HalfSat: 1, Beta: 100, SpendShape: SpendShape{Launch: 70}},
		{Name: "search", MeanSpend: 9000, Variation: 0.01, Decay: 0.1, HalfSat: 0.2, Beta: 100, SpendShape: SpendShape{Holiday: 3}},
	}}
	sim, err := Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	tv := sim.Panel.Spend[0]
	on, off := runs(tv)
	if len(on) < 5 || len(off) < 5 {
		t.Fatalf("tv: %d bursts and %d dark runs inside 156 weeks, want several of each", len(on), len(off))
	}
	for _, n := range on {
		if n < 3 || n > 6 {
			t.Errorf("tv: a burst of %d weeks, want 3 to 6 (runs %v)", n, on)
		}
	}
	for _, n := range off {
		if n < 8 || n > 20 {
			t.Errorf("tv: a dark run of %d weeks, want 8 to 20 (runs %v)", n, off)
		}
	}
	rm := sim.Panel.Spend[1]
	for i, v := range rm {
		if (i < 70) != (v == 0) {
			t.Fatalf("retail_media week %d spend %v: want exactly 0 before week 70 and > 0 from it", i, v)
		}
	}
	day := func(s string) int {
		w, _ := time.Parse(time.DateOnly, s)
		for i, x := range sim.Panel.Weeks {
			if x.Equal(w) {
				return i
			}
		}
		t.Fatalf("no week %s", s)
		return -1
	}
	s := sim.Panel.Spend[2]
	base := s[day("2023-11-13")]
	for _, in := range []string{"2023-11-20", "2023-12-18"} {
		// Variation 0.01: neighbouring weeks differ by about 1%, so the
		// ratio is 3 within a few percent.
		if r := s[day(in)] / base; math.Abs(r-3) > 0.15 {
			t.Errorf("search in holiday week %s / week 2023-11-13 = %.3f, want about 3", in, r)
		}
	}
	if r := s[day("2023-12-25")] / base; math.Abs(r-1) > 0.1 {
		t.Errorf("search in week 2023-12-25 / week 2023-11-13 = %.3f, want about 1 (not a holiday week)", r)
	}
	var sum float64
	for _, v := range tv {
		sum += v
	}
	if m := sum / float64(len(tv)); math.Abs(m-5000) > 0.01*float64(len(tv)) {
		t.Errorf("tv mean spend %.2f, want 5000 (cents rounding aside)", m)
	}
	low, _ := (&Design{Spend: sim.Panel.Spend}).Support()
	if low[0] != 0 || low[1] != 0 {
		t.Errorf("low support of the flighted and the launched channel %v, %v: want exactly 0", low[0], low[1])
	}
}

// A shape that cannot be drawn is refused with its key path.
func TestSpendShapeRefused(t *testing.T) {
	for _, sh := range []SpendShape{{Flight: [2]int{3, 6}}, {Flight: [2]int{6, 3}, Gap: [2]int{1, 2}}, {Launch: 154}, {Holiday: -1}} {
		tr := &Truth{Channels: []TrueChannel{{Name: "tv", MeanSpend: 1, HalfSat: 1, SpendShape: sh}}}
		if _, err := Simulate(tr); err == nil {
			t.Errorf("shape %+v accepted", sh)
		}
	}
}
