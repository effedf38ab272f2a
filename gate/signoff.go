package gate

import (
	"fmt"
	"math"
	"slices"

	"sluice/policies"
)

// Signoff is one role that must sign the decision, with the rule that
// requires it.
type Signoff struct {
	Role        string `json:"role"`
	Rule        string `json:"rule"`
	Explanation string `json:"explanation"`
}

// WaiverRule is the name of the built-in rule that a role whose waiver was
// accepted signs the decision: only its signature shows the role agreed.
const WaiverRule = "waiver_signed_by_its_role"

// planFacts are the figures of the approved plan that sign-off rules test.
type planFacts struct {
	channels          []string
	current, approved []float64
	support           []SupportRange
	horizon           int
	verdict           Verdict
	waivers           []WaiverUse // accepted ones
}

// RequiredSignoffs returns the sign-offs the policy's rules require of
// decision d, judged on what d records: each move's current and approved
// weekly spend, the verdict and the accepted waivers; support is each
// channel's observed range and horizon the plan's weeks. Run records
// exactly this list, so a verifier can derive it again from a record
// instead of trusting the record's copy.
func RequiredSignoffs(p *policies.Policy, d *Decision, support []SupportRange, horizon int) []Signoff {
	f := planFacts{support: support, horizon: horizon, verdict: d.Verdict}
	for _, m := range d.Moves {
		f.channels = append(f.channels, m.Channel)
		f.current = append(f.current, m.Current)
		f.approved = append(f.approved, m.Approved)
	}
	for _, w := range d.Waivers {
		if w.Accepted {
			f.waivers = append(f.waivers, w)
		}
	}
	out := signoffs(p, f)
	if out == nil {
		out = []Signoff{}
	}
	return out
}

// signoffs returns the sign-offs the policy's rules require for the facts,
// in rule order, then those of accepted waivers.
func signoffs(p *policies.Policy, f planFacts) []Signoff {
	var out []Signoff
	add := func(role, rule, why string) {
		for _, s := range out {
			if s.Role == role && s.Rule == rule {
				return
			}
		}
		out = append(out, Signoff{Role: role, Rule: rule, Explanation: why})
	}
	for _, rule := range p.Signoffs {
		fired, facts := f.test(rule.When)
		if !fired {
			continue
		}
		why := facts
		if rule.Explain != "" {
			why = rule.Explain + ": " + facts
		}
		for _, role := range rule.Roles {
			add(role, rule.Name, why)
		}
	}
	for _, w := range f.waivers {
		add(w.Role, WaiverRule, fmt.Sprintf("%s waived check %s, so %s signs", w.Role, w.Check, w.Role))
	}
	return out
}

// test reports whether condition c holds for the plan, and the facts in words.
func (f planFacts) test(c policies.Condition) (bool, string) {
	var total float64
	for _, v := range f.current {
		total += v
	}
	mv := moved(f.approved, f.current)
	switch {
	case c.Always:
		return true, "required for every decision"
	case c.MovedAbove != nil:
		h := mv * float64(f.horizon)
		return h > *c.MovedAbove, fmt.Sprintf("the plan moves %s over the %d weeks, above %s", money(h), f.horizon, money(*c.MovedAbove))
	case c.MovedShareAbove != nil:
		share := math.Inf(1)
		if total > 0 {
			share = mv / total
		} else if mv == 0 {
			share = 0
		}
		return share > *c.MovedShareAbove, fmt.Sprintf("the plan moves %s of weekly spend (%s of %s), above %s",
			pct(share), perWeek(mv), perWeek(total), pct(*c.MovedShareAbove))
	case c.ChangeAbove != nil:
		var hit []string
		for k := range f.channels {
			d := math.Abs(f.approved[k] - f.current[k])
			if d == 0 || d <= *c.ChangeAbove*f.current[k] {
				continue
			}
			if f.current[k] == 0 {
				hit = append(hit, fmt.Sprintf("%s starts from nothing (%s)", f.channels[k], perWeek(f.approved[k])))
				continue
			}
			hit = append(hit, fmt.Sprintf("%s changes by %s (%s to %s)", f.channels[k], pct(d/f.current[k]), money(f.current[k]), perWeek(f.approved[k])))
		}
		return len(hit) > 0, fmt.Sprintf("%s, more than %s", joinAnd(hit), pct(*c.ChangeAbove))
	case c.CutBelow != nil:
		var hit []string
		for k := range f.channels {
			if f.approved[k] < f.current[k] && f.approved[k] < *c.CutBelow {
				hit = append(hit, fmt.Sprintf("%s is cut to %s", f.channels[k], perWeek(f.approved[k])))
			}
		}
		return len(hit) > 0, fmt.Sprintf("%s, below %s", joinAnd(hit), perWeek(*c.CutBelow))
	case c.CutBelowSupport:
		var hit []string
		for k := range f.channels {
			if f.approved[k] < f.current[k] && f.approved[k] < f.support[k].Low {
				hit = append(hit, fmt.Sprintf("%s is cut to %s, below its lowest 4-week average seen (%s)",
					f.channels[k], perWeek(f.approved[k]), perWeek(f.support[k].Low)))
			}
		}
		return len(hit) > 0, joinAnd(hit)
	case c.AnyWaiver:
		var hit []string
		for _, w := range f.waivers {
			hit = append(hit, fmt.Sprintf("check %s was waived by %s", w.Check, w.Role))
		}
		return len(hit) > 0, joinAnd(hit)
	case len(c.VerdictIn) > 0:
		return slices.Contains(c.VerdictIn, string(f.verdict)), "the verdict is " + string(f.verdict)
	}
	return false, ""
}
