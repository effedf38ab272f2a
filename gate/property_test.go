package gate

import (
	"fmt"
	"math"
	"testing"

	"pgregory.net/rapid"

	"sluice/policies"
	"sluice/validation"
)

// Properties every decision keeps, on random invented problems (README.md,
// "Verdict" and "Safe step"): the approved plan lies between current and
// proposed per channel and inside the guards; it keeps the proposal's budget
// (exactly, for a budget-neutral proposal, to 1e-9 relative); a refusal
// moves nothing and an approval moves everything; a downsized plan meets
// the loss limit, and every move that was cut short says why.
func TestDecisionProperties(t *testing.T) {
	var presets []*policies.Policy
	for _, n := range []string{"standard", "cautious", "exploratory"} {
		presets = append(presets, preset(t, n))
	}
	seen := map[Verdict]int{}
	rapid.Check(t, func(t *rapid.T) {
		nch := rapid.IntRange(2, 5).Draw(t, "channels")
		var specs []channelSpec
		var proposed []float64
		for k := range nch {
			cur := rapid.Float64Range(1000, 20000).Draw(t, "current")
			s := channelSpec{
				name: fmt.Sprintf("c%d", k), current: cur,
				high:    cur * rapid.Float64Range(0.8, 2).Draw(t, "high"),
				roi:     rapid.Float64Range(0.5, 2).Draw(t, "roi"),
				roiSD:   rapid.Float64Range(0, 0.2).Draw(t, "sd"),
				halfSat: rapid.Float64Range(0.5, 2).Draw(t, "halfsat"),
				shape:   rapid.Float64Range(1.2, 2.5).Draw(t, "shape"),
				lambda:  rapid.Float64Range(0.1, 0.7).Draw(t, "lambda"),
				exp:     rapid.Bool().Draw(t, "exp"),
			}
			specs = append(specs, s)
			// Mostly towards the better channels, as an allocator would propose.
			change := (s.roi-1.25)*rapid.Float64Range(0, 0.8).Draw(t, "push") + rapid.Float64Range(-0.15, 0.15).Draw(t, "change")
			proposed = append(proposed, cur*(1+change))
		}
		neutral := rapid.Bool().Draw(t, "neutral")
		if neutral {
			var up, down float64
			for k, w := range proposed {
				if d := w - specs[k].current; d > 0 {
					up += d
				} else {
					down -= d
				}
			}
			if up == 0 || down == 0 {
				neutral = false
			} else {
				// Shrink the larger side to the smaller.
				for k := range proposed {
					d := proposed[k] - specs[k].current
					if d > 0 && up > down {
						proposed[k] = specs[k].current + d*down/up
					} else if d < 0 && down > up {
						proposed[k] = specs[k].current + d*up/down
					}
				}
			}
		}
		pol := presets[rapid.IntRange(0, len(presets)-1).Draw(t, "policy")]
		r := makeReview(specs, proposed, rapid.IntRange(20, 60).Draw(t, "draws"), rapid.Uint64().Draw(t, "seed"), pol)
		for k := range r.Support {
			r.Support[k].Low = specs[k].current * rapid.Float64Range(0.3, 1.1).Draw(t, "low")
			r.Support[k].High = max(r.Support[k].High, r.Support[k].Low)
		}
		if rapid.Bool().Draw(t, "evidence") {
			scope := validation.Global
			if k := rapid.IntRange(-1, nch-1).Draw(t, "scope"); k >= 0 {
				scope = r.Channels[k]
			}
			fam := []validation.Family{validation.Stability, validation.Lift, validation.Reconciliation}[rapid.IntRange(0, 2).Draw(t, "family")]
			r.Evidence.Checks = []validation.Check{{Name: "x", Family: fam, Scope: scope,
				Status: []validation.Status{validation.Warn, validation.Fail}[rapid.IntRange(0, 1).Draw(t, "status")]}}
		}

		d, err := Run(r, Settings{})
		if err != nil {
			t.Fatal(err)
		}
		seen[d.Verdict]++
		c, w, a := r.Current, r.Proposed, d.ApprovedPlan
		band := pol.Evidence.ExplorationBand
		for k := range a {
			if a[k] < min(c[k], w[k]) || a[k] > max(c[k], w[k]) {
				t.Fatalf("%s: approved %v outside [current %v, proposed %v]", r.Channels[k], a[k], c[k], w[k])
			}
			lo := min(pol.Support.LowMultiple*r.Support[k].Low, c[k])
			hi := max(pol.Support.HighMultiple*r.Support[k].High, c[k])
			if a[k] < lo*(1-1e-12) || a[k] > hi*(1+1e-12) {
				t.Fatalf("%s: approved %v outside the support guard [%v, %v]", r.Channels[k], a[k], lo, hi)
			}
			capped := false
			for _, u := range d.Checks {
				capped = capped || (u.Action == "cap" && (u.Scope == validation.Global || u.Scope == r.Channels[k]))
			}
			if capped && math.Abs(a[k]-c[k]) > band*c[k]*(1+1e-12) {
				t.Fatalf("%s: approved %v outside the exploration band around %v", r.Channels[k], a[k], c[k])
			}
			m := d.Moves[k]
			if m.SafeStep < 0 || m.SafeStep > 1 || m.Approved != a[k] {
				t.Fatalf("move %+v", m)
			}
			if w[k] != c[k] && math.Abs(a[k]-w[k]) > 1e-12*math.Max(1, math.Abs(w[k])) && len(m.Reasons) == 0 {
				t.Fatalf("%s cut short from %v to %v without a reason (verdict %s)", r.Channels[k], w[k], a[k], d.Verdict)
			}
		}
		net, netProposed := sum(a)-sum(c), sum(w)-sum(c)
		if neutral && math.Abs(sum(a)-sum(w)) > 1e-9*sum(w) {
			t.Fatalf("budget-neutral proposal, approved total %v vs %v", sum(a), sum(w))
		}
		if !neutral && (net*netProposed < -1e-9*sum(c) || math.Abs(net) > math.Abs(netProposed)*(1+1e-9)+1e-9*sum(c)) {
			t.Fatalf("approved net change %v, proposal's %v", net, netProposed)
		}
		switch d.Verdict {
		case Refuse:
			if !slicesEqual(a, c) {
				t.Fatalf("refused but approved %v", a)
			}
		case Approve:
			if !slicesEqual(a, w) {
				t.Fatalf("approved %v, proposal %v", a, w)
			}
		case Downsize:
			if p := pLoss(r, a); p > pol.Risk.MaxLossProbability {
				t.Fatalf("downsized plan loses in %v of draws, limit %v", p, pol.Risk.MaxLossProbability)
			}
			if len(breaches(d.Risk.Approved, limitsOf(r))) > 0 {
				t.Fatalf("downsized plan breaks %v", breaches(d.Risk.Approved, limitsOf(r)))
			}
			if mv := moved(a, c); mv < pol.MinMove.Threshold(sum(c)) {
				t.Fatalf("downsized plan moves %v, below the minimum", mv)
			}
		default:
			t.Fatalf("verdict %q", d.Verdict)
		}
	})
	t.Logf("verdicts: %v", seen)
	if seen[Downsize] == 0 || seen[Refuse] == 0 {
		t.Errorf("the generator reached only %v", seen)
	}
}
