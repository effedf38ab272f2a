package gate

import (
	"slices"
	"strings"
	"testing"
)

const signoffPolicy = `version: 1
risk: {max_loss_probability: 0.2, downside_level: 0.05, cvar_level: 0.05}
support: {high_multiple: 1.2}
roles: {a: {}, b: {}, c: {}, d: {}, e: {}, f: {}, g: {}, h: {}}
signoffs:
  - {name: always, roles: [a], when: {always: true}}
  - {name: big_money, roles: [b], when: {moved_above: 26000}}
  - {name: big_share, roles: [c], when: {moved_share_above: 0.10}}
  - {name: deep, roles: [d], when: {change_above: 0.25}}
  - {name: low_cut, roles: [e], when: {cut_below: 3000}}
  - {name: below_seen, roles: [f], when: {cut_below_support: true}}
  - {name: waived, roles: [g], when: {any_waiver: true}}
  - {name: not_approved, explain: "confirm the change", roles: [h, a], when: {verdict_in: [downsize, refuse]}}
`

// Each rule fires strictly above its threshold, on the approved plan
// (thresholds at the boundary do not fire). Money moved per week is
// max(Σ increases, Σ cuts); the horizon is 13 weeks, so 26,000 is 2,000/week.
func TestSignoffRules(t *testing.T) {
	pol := parsePolicy(t, signoffPolicy)
	support := []SupportRange{{6000, 12000}, {6000, 20000}}
	cases := []struct {
		name              string
		current, approved []float64
		verdict           Verdict
		waivers           []WaiverUse
		want              []string // role/rule
		explains          string   // substring of some explanation
	}{
		{"no move", []float64{10000, 10000}, []float64{10000, 10000}, Approve, nil,
			[]string{"a/always"}, "every decision"},
		{"at every boundary", []float64{10000, 10000}, []float64{8000, 12000}, Approve, nil,
			[]string{"a/always"}, ""},
		{"just above the money limits", []float64{10000, 10000}, []float64{7999, 12001}, Approve, nil,
			[]string{"a/always", "b/big_money", "c/big_share"}, "26,013 over the 13 weeks, above 26,000"},
		{"deep change", []float64{10000, 10000}, []float64{7000, 13000}, Approve, nil,
			[]string{"a/always", "b/big_money", "c/big_share", "d/deep"}, "changes by 30%"},
		{"cut very low", []float64{10000, 10000}, []float64{2900, 17100}, Downsize, nil,
			[]string{"a/always", "b/big_money", "c/big_share", "d/deep", "e/low_cut", "f/below_seen", "h/not_approved", "a/not_approved"},
			"below its lowest 4-week average seen (6,000/week)"},
		{"small cut above history", []float64{10000, 10000}, []float64{9000, 11000}, Approve, nil,
			[]string{"a/always"}, ""},
		{"below history", []float64{10000, 10000}, []float64{5900, 14100}, Approve, nil,
			[]string{"a/always", "b/big_money", "c/big_share", "d/deep", "f/below_seen"}, "x is cut to 5,900/week"},
		{"raise a small channel", []float64{2000, 18000}, []float64{2500, 17500}, Approve, nil,
			[]string{"a/always"}, ""},
		{"from nothing", []float64{0, 10000}, []float64{500, 9500}, Approve, nil,
			[]string{"a/always", "d/deep"}, "starts from nothing"},
		{"waiver", []float64{10000, 10000}, []float64{10000, 10000}, Approve,
			[]WaiverUse{{Waiver: Waiver{"lift_x", "b"}, Accepted: true}},
			[]string{"a/always", "g/waived", "b/" + WaiverRule}, "check lift_x was waived by b"},
		{"refused", []float64{10000, 10000}, []float64{10000, 10000}, Refuse, nil,
			[]string{"a/always", "h/not_approved", "a/not_approved"}, "confirm the change: the verdict is refuse"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := signoffs(pol, planFacts{channels: []string{"x", "y"}, current: c.current, approved: c.approved,
				support: support, horizon: 13, verdict: c.verdict, waivers: c.waivers})
			var pairs []string
			var text strings.Builder
			for _, s := range got {
				pairs = append(pairs, s.Role+"/"+s.Rule)
				text.WriteString(s.Explanation + "\n")
			}
			if !slices.Equal(pairs, c.want) {
				t.Errorf("sign-offs %v, want %v", pairs, c.want)
			}
			if !strings.Contains(text.String(), c.explains) {
				t.Errorf("explanations %q lack %q", text.String(), c.explains)
			}
		})
	}
}
