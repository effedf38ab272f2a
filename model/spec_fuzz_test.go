package model

import (
	"strings"
	"testing"
)

// FuzzSpecFile feeds arbitrary YAML to the spec parser and applies it to a
// three-channel spec (seeds in testdata/fuzz/FuzzSpecFile). It must never
// panic; a spec it accepts must validate, keep every channel's ranges
// ordered, and its priors must resolve to positive SDs.
func FuzzSpecFile(f *testing.F) {
	for _, s := range []string{
		"channels:\n  search: {decay: [0, 0], prior: {roi: {mean: 1.2, sd: 0.3}}}\n",
		"channels:\n  tv: {adstock: delayed, peak: [0, 4], max_lag: 13, prior: {peak: {mean: 2, sd: 1}}}\n",
		"channels:\n  audio: {saturation: exponential, half_saturation: [0.05, 10], prior: {half_saturation: {median: 0.5, log_sd: 1}}}\n",
		"horizon_weeks: 13\nharmonics: 2\ntrend: false\nstarts: 3\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) > 1<<14 {
			return
		}
		sf, err := ParseSpecFile(data, "spec.yaml")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "spec.yaml") {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		spec := NewSpec([]string{"search", "tv", "audio"}, nil)
		if err := spec.ApplyFile(sf, "spec.yaml"); err != nil {
			return
		}
		if err := spec.Validate("spec.yaml"); err != nil {
			t.Fatalf("applied spec does not validate: %v", err)
		}
		for _, c := range spec.Channels {
			if c.Decay[0] > c.Decay[1] || c.HalfSaturation[0] > c.HalfSaturation[1] || c.HalfSaturation[0] <= 0 {
				t.Fatalf("channel %s: ranges %v %v", c.Name, c.Decay, c.HalfSaturation)
			}
		}
		d := &Design{Spec: spec, Spend: [][]float64{{1, 2}, {1, 2}, {1, 2}}, N: 2, MeanSpend: []float64{1.5, 1.5, 1.5}}
		for _, p := range d.ResolvePriors([]float64{10, 12}) {
			if !(p.Decay.SD > 0 && p.HalfSaturation.LogSD > 0 && p.ROI.SD > 0 && p.HalfSaturation.Median > 0) {
				t.Fatalf("unresolved prior %+v", p)
			}
		}
	})
}
