package gate

import (
	"fmt"
	"slices"

	"sluice/policies"
	"sluice/validation"
)

// CheckUse is one check of the evidence with what the policy made of it.
type CheckUse struct {
	validation.Check
	Action   policies.Action `json:"action,omitempty"`    // the policy's action for its status; "" for a pass
	WaivedBy string          `json:"waived_by,omitempty"` // role whose waiver lifted the action
	Effect   string          `json:"effect"`              // in words
}

// WaiverUse is one waiver of the review and whether the policy accepted it.
type WaiverUse struct {
	Waiver
	Accepted bool   `json:"accepted"`
	Reason   string `json:"reason"`
}

// evidenceOutcome is what the evidence does to the decision.
type evidenceOutcome struct {
	checks   []CheckUse
	waivers  []WaiverUse
	refusals []string // each refuses the decision
	warnings []string
	capAll   []string   // global caps: each channel is held in the exploration band
	capChan  [][]string // channel caps, by channel index
	holdChan [][]string // channel refusals: the channel stays at its current spend
}

func (o *evidenceOutcome) capped(k int) bool { return len(o.capAll) > 0 || len(o.capChan[k]) > 0 }

func (o *evidenceOutcome) acceptedWaivers() []WaiverUse {
	var a []WaiverUse
	for _, w := range o.waivers {
		if w.Accepted {
			a = append(a, w)
		}
	}
	return a
}

// reviewEvidence applies the policy's evidence rules and the waivers.
func reviewEvidence(r Review) (*evidenceOutcome, error) {
	rules := r.Policy.Evidence
	out := &evidenceOutcome{capChan: make([][]string, len(r.Channels)), holdChan: make([][]string, len(r.Channels))}
	band := "±" + pct(rules.ExplorationBand) + " of current spend"

	lifted := make([]bool, len(r.Waivers)) // the waiver lifted something
	// Every check with a p-value is graded by the policy's false-alarm
	// rates (validation.Grade), the others keep their raw thresholds.
	checks := slices.Clone(r.Evidence.Checks)
	for i := range checks {
		if l := rules.Checks[checks[i].Name].RawLimit; l != nil {
			checks[i].GradeRaw(*l)
		}
	}
	validation.Grade(checks, rules.RatesFor)
	for _, c := range checks {
		use := CheckUse{Check: c, Action: rules.ActionFor(c)}
		if use.Action == "" {
			use.Effect = "passed"
			out.checks = append(out.checks, use)
			continue
		}
		global := c.Scope == "" || c.Scope == validation.Global
		switch {
		case c.Basis == validation.BasisPrecision && use.Action != policies.Warn:
			// The draws that judge the moves carry the same uncertainty:
			// acting on it again would count it twice.
			use.Action = policies.Warn
			what := fmt.Sprintf("check %s on %s (%s) %s: %s", c.Name, c.Scope, c.Family, statusWord(c.Status == validation.Fail), c.Detail)
			use.Effect = "warning only: the risk limits already count this uncertainty (same draws)"
			out.warnings = append(out.warnings, what+"; the risk limits already count it")
			out.checks = append(out.checks, use)
			continue
		case use.Action == policies.Refuse && !global:
			// Only a check about the whole model refuses the decision; a
			// channel's failure holds that channel.
			use.Action = policies.Hold
		}
		for i, w := range r.Waivers {
			if w.Check == c.Name && rules.MayWaive(w.Role, c) && use.WaivedBy == "" {
				use.WaivedBy = w.Role
				lifted[i] = true
			}
		}
		on := ""
		if !global {
			on = " on " + c.Scope
		}
		what := fmt.Sprintf("check %s%s (%s) %s", c.Name, on, c.Family, statusWord(c.Status == validation.Fail))
		if c.Detail != "" {
			what += ": " + c.Detail
		}
		if c.PValue != nil {
			what += fmt.Sprintf(" (p = %.2g; a right model fails this check at rate %.2g)", *c.PValue, c.Rate)
		}
		k := slices.Index(r.Channels, c.Scope)
		switch {
		case use.WaivedBy != "":
			use.Effect = "waived by " + use.WaivedBy
			out.warnings = append(out.warnings, what+"; waived by "+use.WaivedBy)
		case use.Action == policies.Hold && global:
			use.Effect = "holds every channel at its current spend"
			for j := range out.holdChan {
				out.holdChan[j] = append(out.holdChan[j], fmt.Sprintf("%s; the policy moves no channel when a check of the %s family %s",
					what, c.Family, statusWord(c.Status == validation.Fail)))
			}
		case use.Action == policies.Hold && k < 0:
			return nil, fmt.Errorf("gate: evidence check %q is scoped to %q, which is not a channel of the review (channels: %v)", c.Name, c.Scope, r.Channels)
		case use.Action == policies.Hold:
			use.Effect = "holds " + c.Scope + " at its current spend"
			out.holdChan[k] = append(out.holdChan[k], fmt.Sprintf("%s; the policy does not move a channel whose %s check %s",
				what, c.Family, statusWord(c.Status == validation.Fail)))
		case use.Action == policies.Refuse:
			use.Effect = "refuses the decision"
			out.refusals = append(out.refusals, fmt.Sprintf("%s; the policy refuses any move when a check of the %s family %s", what, c.Family, statusWord(c.Status == validation.Fail)))
		case use.Action == policies.Cap && global:
			use.Effect = "holds every channel within " + band
			out.capAll = append(out.capAll, fmt.Sprintf("%s; the policy holds every channel within %s", what, band))
		case use.Action == policies.Cap && k < 0:
			return nil, fmt.Errorf("gate: evidence check %q is scoped to %q, which is not a channel of the review (channels: %v)", c.Name, c.Scope, r.Channels)
		case use.Action == policies.Cap:
			use.Effect = "holds " + c.Scope + " within " + band
			out.capChan[k] = append(out.capChan[k], fmt.Sprintf("%s; the policy holds %s within %s", what, c.Scope, band))
		default:
			use.Effect = "warning only"
			out.warnings = append(out.warnings, what)
		}
		out.checks = append(out.checks, use)
	}

	for i, w := range r.Waivers {
		u := WaiverUse{Waiver: w, Accepted: lifted[i]}
		var found *validation.Check
		for j := range r.Evidence.Checks {
			if r.Evidence.Checks[j].Name == w.Check {
				found = &r.Evidence.Checks[j]
				break
			}
		}
		_, roleDefined := r.Policy.Roles[w.Role]
		switch {
		case u.Accepted:
			u.Reason = fmt.Sprintf("the policy lets %s waive %s", w.Role, w.Check)
		case found == nil:
			u.Reason = fmt.Sprintf("no check called %s in the evidence", w.Check)
		case !roleDefined:
			u.Reason = fmt.Sprintf("role %s is not defined by the policy", w.Role)
		case !rules.MayWaive(w.Role, *found):
			u.Reason = fmt.Sprintf("the policy does not let %s waive %s (%s)", w.Role, w.Check, found.Family)
		default:
			u.Reason = fmt.Sprintf("check %s did not warn or fail, or another waiver lifted it; nothing to waive", w.Check)
		}
		if !u.Accepted {
			out.warnings = append(out.warnings, "waiver not accepted: "+u.Reason)
		}
		out.waivers = append(out.waivers, u)
	}
	return out, nil
}
