package policies

import (
	"testing"
)

// FuzzParse: Parse never panics, and whatever it accepts meets its own
// checks. Seeds: the presets, base, and testdata/fuzz/FuzzParse.
func FuzzParse(f *testing.F) {
	for _, n := range Names() {
		data, err := presetFS.ReadFile("presets/" + n + ".yaml")
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data)
	}
	f.Add([]byte(base))
	f.Fuzz(func(t *testing.T, data []byte) {
		p, err := Parse(data, "f.yaml")
		if err != nil {
			if err.Error() == "" {
				t.Fatal("empty error message")
			}
			return
		}
		if p.check() != nil {
			t.Fatalf("accepted a policy that fails its checks: %v", p.check())
		}
		r := p.Risk
		if !(r.MaxLossProbability > 0 && r.MaxLossProbability < 1 && r.DownsideLevel > 0 && r.DownsideLevel < 0.5 &&
			r.CVaRLevel > 0 && r.CVaRLevel <= 0.5 && p.Support.HighMultiple >= 1) {
			t.Fatalf("limits out of range: %+v %+v", r, p.Support)
		}
		for _, rule := range p.Signoffs {
			if len(rule.When.Kinds()) != 1 {
				t.Fatalf("rule %q has conditions %v", rule.Name, rule.When.Kinds())
			}
			for _, role := range rule.Roles {
				if _, ok := p.Roles[role]; !ok {
					t.Fatalf("rule %q names undefined role %q", rule.Name, role)
				}
			}
		}
		q, err := Parse(p.Raw, "g.yaml")
		if err != nil || len(q.Signoffs) != len(p.Signoffs) {
			t.Fatalf("accepted bytes do not parse again: %v", err)
		}
	})
}
