package validation

import (
	"fmt"
	"strings"

	"sluice/model"
)

// Identification is the family of the checks that ask whether the data
// settled each channel's curve at all (model.Identify): a parameter left on
// a bound of its box, or an effect fitted to zero.
const Identification Family = "identification"

// IdentificationChecks grades model.Identify's findings on the point fit p,
// one check "identification/settled" per channel; the metric counts the
// graded findings (parameters on a bound, plus one for a zero effect). A
// decay on a lower bound of 0 is listed but not graded: no carryover is a
// value a channel can truly have, not an edge the box imposes.
//
//   - fail: the effect is fitted to zero, or two or more graded nonlinear
//     parameters sit on bounds (the box, not the data, sets the curve's
//     form in more than one direction);
//   - warn: one parameter on a bound;
//   - pass: none.
//
// The grading is the project's own rule (common practice, no source). A
// channel that fails has a response the data cannot vouch for, so the
// presets hold it at its current spend while identified moves proceed.
func IdentificationChecks(d *model.Design, p model.Params) []Check {
	var out []Check
	for _, id := range d.Identify(p) {
		bounds := 0
		for _, h := range id.OnBound {
			if !(h.Param == "decay" && h.Side == model.BoundLower && h.Bound == 0) {
				bounds++
			}
		}
		n := bounds
		if id.ZeroEffect {
			n++
		}
		st := Pass
		switch {
		case id.ZeroEffect || bounds >= 2:
			st = Fail
		case n == 1:
			st = Warn
		}
		detail := "every nonlinear parameter inside its box and a non-zero effect"
		if len(id.OnBound) > 0 || id.ZeroEffect {
			var parts []string
			for _, h := range id.OnBound {
				parts = append(parts, fmt.Sprintf("%s %.3g on its %s bound", h.Param, h.Value, h.Side))
			}
			if id.ZeroEffect {
				parts = append(parts, "effect fitted to zero")
			}
			detail = strings.Join(parts, "; ") + "; fail on a zero effect or two parameters on bounds, warn on one"
		}
		out = append(out, check("identification/settled", Identification, id.Channel, st, float64(n), 2, "%s", detail))
	}
	return out
}
