package model

import (
	"fmt"
	"math/rand/v2"
	"time"
)

// SpendShape holds the shapes real media spend takes, beyond the log-normal
// week-to-week variation of a TrueChannel: flighting in bursts with long
// dark runs, a launch part-way through the history, and holiday spikes.
// The zero value adds nothing.
type SpendShape struct {
	// Flight, when set, puts the channel on air in bursts of Flight[0] to
	// Flight[1] weeks, each followed by a dark run of Gap[0] to Gap[1] weeks
	// of exactly zero spend (TV, cinema, outdoor).
	Flight [2]int `yaml:"flight_weeks" json:"flight_weeks,omitempty"`
	Gap    [2]int `yaml:"gap_weeks" json:"gap_weeks,omitempty"`
	// Launch is the 0-based index of the first week with spend; every week
	// before it is exactly zero (a channel launched mid-history).
	Launch int `yaml:"launch_week" json:"launch_week,omitempty"`
	// Holiday multiplies spend in the holiday weeks (weeks starting from
	// 15 November to 24 December) by this factor; 0 means 1.
	Holiday float64 `yaml:"holiday" json:"holiday,omitempty"`
}

// check refuses a shape that cannot be drawn over n weeks; field is the
// key path for messages.
func (s SpendShape) check(field string, n int) error {
	if s.Flight != [2]int{} || s.Gap != [2]int{} {
		if s.Flight[0] < 1 || s.Flight[1] < s.Flight[0] || s.Gap[0] < 1 || s.Gap[1] < s.Gap[0] {
			return fmt.Errorf("%s: flight_weeks and gap_weeks must both be [lo, hi] with 1 <= lo <= hi, got %v and %v", field, s.Flight, s.Gap)
		}
	}
	if s.Launch < 0 || s.Launch > n-SupportWeeks {
		return fmt.Errorf("%s.launch_week: %d must be between 0 and weeks - %d = %d", field, s.Launch, SupportWeeks, n-SupportWeeks)
	}
	if s.Holiday < 0 || s.Holiday > 20 {
		return fmt.Errorf("%s.holiday: %v must be between 0 and 20", field, s.Holiday)
	}
	return nil
}

// apply shapes the spend x (one value per week of weeks) in place. Flight
// bursts start on air in week 0 or part-way through a gap, drawn from rng;
// rng is used only when flighting is set, so a truth without shapes draws
// the same panel as before shapes existed.
func (s SpendShape) apply(rng *rand.Rand, weeks []time.Time, x []float64) {
	if s.Flight[0] > 0 {
		between := func(r [2]int) int { return r[0] + rng.IntN(r[1]-r[0]+1) }
		t := -rng.IntN(s.Gap[1] + 1) // start part-way into a dark run
		for t < len(x) {
			t += between(s.Flight) // on air: the drawn spend stays
			off := between(s.Gap)
			for i := max(t, 0); i < min(t+off, len(x)); i++ {
				x[i] = 0
			}
			t += off
		}
	}
	for i := 0; i < s.Launch && i < len(x); i++ {
		x[i] = 0
	}
	if s.Holiday > 0 {
		for i, w := range weeks {
			if IsHolidayWeek(w) {
				x[i] *= s.Holiday
			}
		}
	}
}

// IsHolidayWeek reports whether the week starting on w starts between
// 15 November and 24 December (the run-up to the year-end holidays).
func IsHolidayWeek(w time.Time) bool {
	return (w.Month() == time.November && w.Day() >= 15) || (w.Month() == time.December && w.Day() <= 24)
}
