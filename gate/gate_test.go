package gate

import (
	"math"
	"strings"
	"testing"

	"sluice/validation"
)

// Scenario tests on invented draws. Expected outcomes follow from
// the README's definitions (gain of a move, safe step, support guard,
// verdicts) and are checked against figures computed here, outside the
// gate, with Economics.Gains and internal/sample.

// tight: search earns 0.8 per unit at the margin, video 2.0, tv 1.2, with
// small spread over the draws.
var tight = []channelSpec{
	{name: "search", current: 10000, high: 12000, roi: 0.8, roiSD: 0.03, halfSat: 1, shape: 2, lambda: 0.3},
	{name: "video", current: 5000, high: 6000, roi: 2.0, roiSD: 0.05, halfSat: 1.2, shape: 1.8, lambda: 0.5},
	{name: "tv", current: 8000, high: 9000, roi: 1.2, roiSD: 0.05, halfSat: 1, exp: true, lambda: 0.6},
}

// loose has risk limits that well-identified moves meet easily, so the
// guards and the evidence rules are what binds.
const loose = `version: 1
name: loose
risk:
  max_loss_probability: 0.5
  downside_level: 0.05
  cvar_level: 0.05
support:
  high_multiple: 1.2
  low_multiple: 0.8
evidence:
  exploration_band: 0.10
  families:
    lift: {on_fail: cap}
    stability: {on_fail: cap}
  waivers:
    analytics_lead: {families: [lift]}
roles:
  analytics_lead: {}
  finance_partner: {}
signoffs:
  - name: every_decision
    roles: [finance_partner]
    when: {always: true}
  - name: waiver_used
    roles: [finance_partner]
    when: {any_waiver: true}
`

func relNear(a, b, tol float64) bool { return math.Abs(a-b) <= tol*math.Max(1, math.Abs(b)) }

func TestApproveWellIdentified(t *testing.T) {
	r := makeReview(tight, []float64{9000, 6000, 8000}, 1000, 1, preset(t, "standard"))
	d := run(t, r)
	if d.Verdict != Approve {
		t.Fatalf("verdict %s, reasons %q", d.Verdict, d.Reasons)
	}
	for k, m := range d.Moves {
		if m.Approved != r.Proposed[k] || d.ApprovedPlan[k] != r.Proposed[k] || m.SafeStep != 1 || len(m.Reasons) != 0 {
			t.Errorf("move %+v", m)
		}
	}
	if p := pLoss(r, r.Proposed); p != 0 || d.Risk.Approved.PLoss != 0 {
		t.Errorf("a well-identified move loses in %v of draws (gate %v)", p, d.Risk.Approved.PLoss)
	}
	// 1,000/week is 4.3% of 23,000/week: only the every-decision rule fires.
	if len(d.SignoffsRequired) != 1 || d.SignoffsRequired[0].Role != "marketing_lead" || d.SignoffsRequired[0].Rule != "every_decision" {
		t.Errorf("sign-offs %+v", d.SignoffsRequired)
	}
}

func TestDisagreeingDraws(t *testing.T) {
	// Video's marginal ROI is 1.0 ± 1.0 over the draws, search's 1.0: about
	// half the draws say moving money into video loses.
	specs := []channelSpec{
		{name: "search", current: 10000, high: 12000, roi: 1.0, roiSD: 0.02, halfSat: 1, shape: 2, lambda: 0.3},
		{name: "video", current: 5000, high: 8000, roi: 1.0, roiSD: 1.0, halfSat: 1.2, shape: 1.8, lambda: 0.5},
	}
	r := makeReview(specs, []float64{8500, 6500}, 1000, 2, preset(t, "standard"))
	if p := pLoss(r, r.Proposed); p < 0.35 || p > 0.75 {
		t.Fatalf("scenario: P(loss) of the proposal %v, want about one half", p)
	}
	d := run(t, r)
	switch d.Verdict {
	case Refuse:
		for k, m := range d.Moves {
			if m.Approved != r.Current[k] {
				t.Errorf("refused, yet %s moves to %v", m.Channel, m.Approved)
			}
		}
	case Downsize:
		if p := pLoss(r, d.ApprovedPlan); p > r.Policy.Risk.MaxLossProbability {
			t.Errorf("downsized plan still loses in %v of draws", p)
		}
	default:
		t.Fatalf("verdict %s for a move the draws disagree on", d.Verdict)
	}
	if !hasReason(d.Moves[1], "video") || !hasReason(d.Moves[1], "the policy") {
		t.Errorf("video's move carries no reason a reader can follow: %q", d.Moves[1].Reasons)
	}
	t.Logf("verdict %s: %q", d.Verdict, d.Moves[1].Reasons)
}

func TestDownsizeToLossLimit(t *testing.T) {
	// Video's marginal ROI at current spend beats search's in about 95% of
	// draws (1.25 ± 0.15 against 1.0), but video saturates: the further the
	// move, the more draws say it loses. The policy allows 10%.
	specs := []channelSpec{
		{name: "search", current: 10000, high: 20000, roi: 1.0, roiSD: 0.02, halfSat: 1, shape: 2, lambda: 0.3},
		{name: "video", current: 5000, high: 20000, roi: 1.25, roiSD: 0.15, halfSat: 0.8, shape: 2, lambda: 0.5},
	}
	r := makeReview(specs, []float64{7000, 8000}, 1000, 4, parsePolicy(t, lossOnly))
	limit := r.Policy.Risk.MaxLossProbability
	if p := pLoss(r, r.Proposed); p <= limit {
		t.Fatalf("scenario: the proposal loses in only %v of draws", p)
	}
	d := run(t, r)
	if d.Verdict != Downsize {
		t.Fatalf("verdict %s, reasons %q", d.Verdict, d.Reasons)
	}
	tau := (d.ApprovedPlan[1] - r.Current[1]) / (r.Proposed[1] - r.Current[1])
	if !relNear(tau, d.Moves[1].SafeStep, 1e-12) || !relNear(d.ApprovedPlan[0], 10000-3000*tau, 1e-12) {
		t.Fatalf("approved %v is not the safe step %v of the move", d.ApprovedPlan, d.Moves[1].SafeStep)
	}
	step := func(f float64) []float64 { return []float64{10000 - 3000*f, 5000 + 3000*f} }
	if p := pLoss(r, d.ApprovedPlan); p > limit || d.Risk.Approved.PLoss != p {
		t.Errorf("approved plan loses in %v of draws (gate says %v), limit %v", p, d.Risk.Approved.PLoss, limit)
	}
	// A step larger by twice the search tolerance breaks the limit.
	if p := pLoss(r, step(tau+2*DefaultTolerance)); p <= limit {
		t.Errorf("step %v loses in %v of draws: the safe step is not the largest", tau+2*DefaultTolerance, p)
	}
	if !hasReason(d.Moves[1], "chance of losing money") || !hasReason(d.Moves[1], "the policy allows 10%") {
		t.Errorf("video's reasons: %q", d.Moves[1].Reasons)
	}
	t.Logf("safe step %.5f = %.0f/week; %q", tau, d.Moves[1].SafeStepPerWeek, d.Moves[1].Reasons)
}

func TestSupportGuard(t *testing.T) {
	pol := parsePolicy(t, loose)
	t.Run("above the highest seen", func(t *testing.T) {
		// video's highest 4-week average is 6,000: the guard trusts 7,200.
		r := makeReview(tight, []float64{7000, 8000, 8000}, 400, 5, pol)
		d := run(t, r)
		if d.Verdict != Downsize {
			t.Fatalf("verdict %s", d.Verdict)
		}
		if !relNear(d.ApprovedPlan[1], 1.2*6000, 1e-12) || !relNear(d.ApprovedPlan[0], 10000-2200, 1e-12) || d.ApprovedPlan[2] != 8000 {
			t.Errorf("approved %v, want video held at 7,200 and search cut by the same 2,200", d.ApprovedPlan)
		}
		if !hasReason(d.Moves[1], "beyond what the data supports") || !hasReason(d.Moves[1], "7,200/week") {
			t.Errorf("video reasons %q", d.Moves[1].Reasons)
		}
		if !hasReason(d.Moves[0], "cuts are held") {
			t.Errorf("search reasons %q", d.Moves[0].Reasons)
		}
	})
	t.Run("below the lowest seen", func(t *testing.T) {
		// search's lowest 4-week average is 7,000: the floor is 5,600.
		specs := append([]channelSpec(nil), tight...)
		specs[1].high = 20000
		r := makeReview(specs, []float64{4000, 11000, 8000}, 400, 5, pol)
		d := run(t, r)
		if !relNear(d.ApprovedPlan[0], 0.8*7000, 1e-12) || !relNear(d.ApprovedPlan[1], 5000+4400, 1e-12) {
			t.Errorf("approved %v, want search held at 5,600 and video raised by 4,400", d.ApprovedPlan)
		}
		if !hasReason(d.Moves[0], "below what the data supports") {
			t.Errorf("search reasons %q", d.Moves[0].Reasons)
		}
	})
}

func liftFail(scope string) validation.Evidence {
	return validation.Evidence{Checks: []validation.Check{
		{Name: "holdout", Family: validation.Accuracy, Scope: validation.Global, Status: validation.Pass},
		{Name: "lift_" + scope, Family: validation.Lift, Scope: scope, Status: validation.Fail, Metric: 0.4, Threshold: 0.25,
			Detail: "the model's lift is 40% off the test's"},
	}}
}

func TestEvidenceCapAndRefuse(t *testing.T) {
	// search −1,900; video +1,500 (30%); tv +400 (5%).
	proposed := []float64{8100, 6500, 8400}
	specs := append([]channelSpec(nil), tight...)
	specs[1].high = 20000

	t.Run("cap one channel", func(t *testing.T) {
		r := makeReview(specs, proposed, 400, 6, parsePolicy(t, loose))
		r.Evidence = liftFail("video")
		d := run(t, r)
		want := []float64{10000 - 500 - 400, 5500, 8400} // video held to +10%, tv untouched
		for k := range want {
			if !relNear(d.ApprovedPlan[k], want[k], 1e-12) {
				t.Errorf("%s approved %v, want %v", r.Channels[k], d.ApprovedPlan[k], want[k])
			}
		}
		if d.Verdict != Downsize || !hasReason(d.Moves[1], "lift_video") || len(d.Moves[2].Reasons) != 0 {
			t.Errorf("verdict %s, video reasons %q, tv reasons %q", d.Verdict, d.Moves[1].Reasons, d.Moves[2].Reasons)
		}
	})
	t.Run("cap all", func(t *testing.T) {
		r := makeReview(specs, proposed, 400, 6, parsePolicy(t, loose))
		r.Evidence = validation.Evidence{Checks: []validation.Check{
			{Name: "refit_stability", Family: validation.Stability, Scope: validation.Global, Status: validation.Fail},
		}}
		d := run(t, r)
		for k, v := range d.ApprovedPlan {
			if math.Abs(v-r.Current[k]) > 0.1*r.Current[k]*(1+1e-12) {
				t.Errorf("%s approved %v, outside ±10%% of %v", r.Channels[k], v, r.Current[k])
			}
		}
		if !relNear(sum(d.ApprovedPlan), sum(r.Current), 1e-12) || !relNear(d.ApprovedPlan[1], 5500, 1e-12) || !relNear(d.ApprovedPlan[2], 8400, 1e-12) {
			t.Errorf("approved %v, want video 5,500, tv 8,400, search 9,100", d.ApprovedPlan)
		}
	})
	t.Run("refuse on a channel holds the channel", func(t *testing.T) {
		// Issue 13: only a check about the whole model refuses the
		// decision; a channel's failure holds that channel.
		pol := parsePolicy(t, strings.Replace(loose, "lift: {on_fail: cap}", "lift: {on_fail: refuse}", 1))
		r := makeReview(specs, proposed, 400, 6, pol)
		r.Evidence = liftFail("video")
		d := run(t, r)
		if d.Verdict == Refuse || d.ApprovedPlan[1] != r.Current[1] {
			t.Fatalf("verdict %s approved %v; want video held at %v and the rest decided", d.Verdict, d.ApprovedPlan, r.Current[1])
		}
		if !hasReason(d.Moves[1], "lift_video") {
			t.Errorf("video reasons %q", d.Moves[1].Reasons)
		}
	})
	t.Run("refuse on the whole model", func(t *testing.T) {
		pol := parsePolicy(t, loose)
		r := makeReview(specs, proposed, 400, 6, pol)
		r.Evidence = validation.Evidence{Checks: []validation.Check{
			{Name: "holdout_wmape", Family: validation.Accuracy, Scope: validation.Global, Status: validation.Fail},
		}}
		d := run(t, r)
		if d.Verdict != Refuse || !slicesEqual(d.ApprovedPlan, r.Current) {
			t.Fatalf("verdict %s approved %v", d.Verdict, d.ApprovedPlan)
		}
		if len(d.Reasons) == 0 || !contains(d.Reasons[0], "holdout_wmape") || !contains(d.Reasons[0], "refuses") {
			t.Errorf("reasons %q", d.Reasons)
		}
		for _, k := range []int{0, 1, 2} {
			if !hasReason(d.Moves[k], "refused") {
				t.Errorf("%s reasons %q", r.Channels[k], d.Moves[k].Reasons)
			}
		}
	})
	t.Run("precision evidence is not counted twice", func(t *testing.T) {
		pol := parsePolicy(t, strings.Replace(loose, "lift: {on_fail: cap}", "lift: {on_fail: refuse}", 1))
		r := makeReview(specs, proposed, 400, 6, pol)
		r.Evidence = liftFail("video")
		r.Evidence.Checks[1].Basis = validation.BasisPrecision
		d := run(t, r)
		plain := run(t, makeReview(specs, proposed, 400, 6, pol))
		if !slicesEqual(d.ApprovedPlan, plain.ApprovedPlan) || d.Checks[1].Action != "warn" {
			t.Errorf("a precision check changed the plan: %v, without it %v; action %q", d.ApprovedPlan, plain.ApprovedPlan, d.Checks[1].Action)
		}
	})
}

func TestWaivers(t *testing.T) {
	pol := parsePolicy(t, strings.Replace(loose, "lift: {on_fail: cap}", "lift: {on_fail: refuse}", 1))
	proposed := []float64{9000, 5400, 8600} // inside every band: only the check stands in the way
	cases := []struct {
		name    string
		waiver  Waiver
		verdict Verdict
	}{
		{"allowed role", Waiver{"lift_video", "analytics_lead"}, Approve},
		// Not waived, the failed channel check holds video: the rest moves.
		{"role not allowed", Waiver{"lift_video", "finance_partner"}, Downsize},
		{"undefined role", Waiver{"lift_video", "intern"}, Downsize},
		{"other check", Waiver{"lift_tv", "analytics_lead"}, Downsize},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := makeReview(tight, proposed, 300, 8, pol)
			r.Evidence = liftFail("video")
			r.Waivers = []Waiver{c.waiver}
			d := run(t, r)
			if d.Verdict != c.verdict {
				t.Fatalf("verdict %s, want %s; reasons %q", d.Verdict, c.verdict, d.Reasons)
			}
			accepted := c.verdict == Approve
			if len(d.Waivers) != 1 || d.Waivers[0].Accepted != accepted || d.Waivers[0].Reason == "" {
				t.Fatalf("waivers %+v", d.Waivers)
			}
			roles := map[string]string{}
			for _, s := range d.SignoffsRequired {
				roles[s.Role+"/"+s.Rule] = s.Explanation
			}
			_, signs := roles["analytics_lead/"+WaiverRule]
			_, rule := roles["finance_partner/waiver_used"]
			if signs != accepted || rule != accepted {
				t.Errorf("sign-offs %v", roles)
			}
			if accepted && d.Checks[1].WaivedBy != "analytics_lead" {
				t.Errorf("check use %+v", d.Checks[1])
			}
		})
	}
}

func slicesEqual(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// A hold action keeps only the failed channel at its current spend; the
// other channels still move (issue: channel-scoped failures limit only
// that channel).
func TestEvidenceHold(t *testing.T) {
	pol := parsePolicy(t, strings.Replace(loose, "lift: {on_fail: cap}", "lift: {on_fail: hold}", 1))
	proposed := []float64{9000, 5400, 8600}
	r := makeReview(tight, proposed, 300, 8, pol)
	r.Evidence = liftFail("video")
	d := run(t, r)
	if d.ApprovedPlan[1] != r.Current[1] {
		t.Fatalf("video approved %v, want it held at %v", d.ApprovedPlan[1], r.Current[1])
	}
	if d.Verdict == Refuse {
		t.Fatalf("a channel hold refused the whole decision: %q", d.Reasons)
	}
	if !hasReason(d.Moves[1], "lift_video") {
		t.Errorf("video reasons %q", d.Moves[1].Reasons)
	}
}

// TestFalseAlarmRates: a check with a p-value is graded by the policy's
// false-alarm rate for its family, split over the family's tested checks
// (Bonferroni); a raw limit the policy sets for a named check wins.
func TestFalseAlarmRates(t *testing.T) {
	p := func(v float64) *float64 { return &v }
	ev := func() validation.Evidence {
		return validation.Evidence{Checks: []validation.Check{
			// Two tested stability checks: each gets half the family's rate.
			{Name: "stability/drift", Family: validation.Stability, Scope: "video", Status: validation.Pass, Metric: 2.2, PValue: p(0.03)},
			{Name: "stability/drift", Family: validation.Stability, Scope: "search", Status: validation.Pass, Metric: 0.1, PValue: p(0.9)},
		}}
	}
	cases := []struct {
		name, rates string
		want        validation.Status
	}{
		// 0.03 < 0.10/2: fails.
		{"fail at 10%", "  false_alarm: {fail: 0.10, warn: 0.20}\n", validation.Fail},
		// 0.03 ≥ 0.05/2 but < 0.20/2: warns.
		{"warn at 5%", "  false_alarm: {fail: 0.05, warn: 0.20}\n", validation.Warn},
		// 0.03 ≥ 0.02/2 and ≥ 0.04/2: passes.
		{"pass at 2%", "  false_alarm: {fail: 0.02, warn: 0.04}\n", validation.Pass},
		// The raw limit on the metric 2.2 (above 2) fails whatever the rate.
		{"raw limit", "  false_alarm: {fail: 0.02, warn: 0.04}\n  checks:\n    stability/drift: {raw_limit: {warn: 1, fail: 2}}\n", validation.Fail},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			pol := parsePolicy(t, strings.Replace(loose, "evidence:\n", "evidence:\n"+c.rates, 1))
			r := makeReview(tight, []float64{9000, 5400, 8600}, 300, 8, pol)
			r.Evidence = ev()
			d := run(t, r)
			var got *CheckUse
			for i := range d.Checks {
				if d.Checks[i].Scope == "video" {
					got = &d.Checks[i]
				}
			}
			if got == nil || got.Status != c.want {
				t.Fatalf("video's drift check: %+v, want status %s", got, c.want)
			}
			if r.Evidence.Checks[0].Status != validation.Pass {
				t.Error("the gate changed the review's evidence in place")
			}
		})
	}
}
