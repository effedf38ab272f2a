package model

import (
	"strings"
	"testing"

	"sluice/internal/strictyaml"
)

// FuzzSpecEffect feeds spec files to the spec parser and ApplyFile: either
// an error naming the source, or a valid spec whose varying channels have a
// basis of 4 to 20 functions and a positive step, and whose parameter count
// adds the extra basis weights. Seed corpus: testdata/fuzz/FuzzSpecEffect.
func FuzzSpecEffect(f *testing.F) {
	f.Add([]byte("channels:\n  search: {effectiveness: drifting}\n"))
	f.Add([]byte("channels:\n  search: {effectiveness: seasonal, effect_basis: 8, effect_step: 0.1}\n"))
	f.Add([]byte("channels:\n  search: {effectiveness: wobbly}\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		var sf SpecFile
		if err := strictyaml.Decode(data, "spec.yaml", &sf); err != nil {
			if !strings.HasPrefix(err.Error(), "spec.yaml") {
				t.Fatalf("error does not name the file: %q", err)
			}
			return
		}
		s := NewSpec([]string{"search", "social"}, nil)
		if err := s.ApplyFile(&sf, "spec.yaml"); err != nil {
			if !strings.HasPrefix(err.Error(), "spec.yaml") {
				t.Fatalf("error does not name the file: %q", err)
			}
			return
		}
		extra := 0
		for _, c := range s.Channels {
			if c.Varying() {
				if c.EffectBasis < 4 || c.EffectBasis > 20 || !(c.EffectStep > 0) {
					t.Fatalf("accepted %+v", c)
				}
				extra += c.EffectBasis - 1
			}
		}
		flat := s.Constant()
		if got, want := s.NumParams(), flat.NumParams()+extra; got != want {
			t.Fatalf("NumParams %d, want %d", got, want)
		}
	})
}
