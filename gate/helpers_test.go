package gate

import (
	"testing"

	"sluice/internal/sample"
	"sluice/optimize"
	"sluice/policies"
)

var econ = optimize.Economics{Horizon: spendWeeks, Margin: 1, ValuePerKPI: 1}

func preset(t testing.TB, name string) *policies.Policy {
	t.Helper()
	p, err := policies.Preset(name)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func parsePolicy(t testing.TB, yaml string) *policies.Policy {
	t.Helper()
	p, err := policies.Parse([]byte(yaml), "test.yaml")
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// lossOnly is a policy whose only binding limit is the probability of loss.
const lossOnly = `version: 1
name: loss_only
risk:
  max_loss_probability: 0.10
  downside_level: 0.05
  cvar_level: 0.05
support:
  high_multiple: 10
roles:
  finance_partner: {}
signoffs:
  - name: every_decision
    roles: [finance_partner]
    when: {always: true}
`

func makeReview(specs []channelSpec, proposed []float64, nd int, seed uint64, pol *policies.Policy) Review {
	r := Review{Response: newCurves(seed, nd, specs), Economics: econ, Policy: pol, Proposed: proposed}
	for _, s := range specs {
		r.Channels = append(r.Channels, s.name)
		r.Current = append(r.Current, s.current)
		r.Support = append(r.Support, s.support())
	}
	return r
}

func run(t testing.TB, r Review) *Decision {
	t.Helper()
	d, err := Run(r, Settings{})
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// pLoss is the probability of loss of moving to plan, computed here from
// the definition (README.md "Gain of a move") with the shared value code.
func pLoss(r Review, plan []float64) float64 {
	g := r.Economics.Gains(nil, r.Response, plan, r.Current)
	return sample.ShareBelow(g, 0)
}

func sum(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += v
	}
	return s
}

func hasReason(m Move, sub string) bool {
	for _, r := range m.Reasons {
		if contains(r, sub) {
			return true
		}
	}
	return false
}

func contains(s, sub string) bool {
	for i := 0; i+len(sub) <= len(s); i++ {
		if s[i:i+len(sub)] == sub {
			return true
		}
	}
	return false
}
