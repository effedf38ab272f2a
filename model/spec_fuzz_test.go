package model

import (
	"math"
	"slices"
	"strings"
	"testing"

	"sluice/internal/strictyaml"
)

// FuzzSpecFile fuzzes the model spec (--spec model.yaml): decoded strictly,
// overlaid on the default spec of its channels and validated. A spec that
// passes has finite ranges with low <= high inside the documented limits;
// anything else is refused with the file's name. Seed corpus in
// testdata/fuzz/FuzzSpecFile; each run takes microseconds, so use a short
// -fuzzminimizetime.
func FuzzSpecFile(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		var sf SpecFile
		if err := strictyaml.Decode(data, "model.yaml", &sf); err != nil {
			if !strings.Contains(err.Error(), "model.yaml") {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		var names []string
		for n := range sf.Channels {
			names = append(names, n)
		}
		slices.Sort(names)
		if len(names) == 0 {
			names = []string{"search"}
		}
		s := NewSpec(names, sf.Controls)
		if err := s.ApplyFile(&sf, "model.yaml"); err != nil {
			if !strings.Contains(err.Error(), "model.yaml") {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		for _, c := range s.Channels {
			for _, r := range []Range{c.Decay, c.HalfSaturation, c.Shape, c.Peak} {
				if math.IsNaN(r[0]) || math.IsNaN(r[1]) || math.IsInf(r[0], 0) || math.IsInf(r[1], 0) || r[0] > r[1] {
					t.Fatalf("channel %s: accepted range %v", c.Name, r)
				}
			}
			if c.HalfSaturation[0] <= 0 || c.Decay[1] > 0.99 {
				t.Fatalf("channel %s: accepted half saturation %v, decay %v", c.Name, c.HalfSaturation, c.Decay)
			}
		}
		if s.Horizon < 1 || s.Horizon > 104 || s.Starts < 1 || s.Starts > 200 {
			t.Fatalf("accepted horizon %d, starts %d", s.Horizon, s.Starts)
		}
	})
}
