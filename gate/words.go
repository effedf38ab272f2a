package gate

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"sluice/internal/words"
)

// The words of the decision: reasons a finance partner can read without the
// model in front of them.

// money formats an amount of currency: whole units with thousands
// separators from 100 up, three significant digits below.
func money(x float64) string {
	if math.Abs(x) < 100 {
		return strconv.FormatFloat(x, 'g', 3, 64)
	}
	return words.Thousands(x)
}

func percentile(level float64) string { return words.Percentile(level) }
func joinAnd(w []string) string       { return words.JoinAnd(w) }

func perWeek(x float64) string { return money(x) + "/week" }

// pct formats a share as a percentage with at most one decimal.
func pct(p float64) string {
	s := strconv.FormatFloat(p*100, 'f', 1, 64)
	return strings.TrimSuffix(s, ".0") + "%"
}

// clause says how a move breaks one limit, as a predicate ("has a 23%
// chance of losing money (the policy allows 10%)").
func (b breach) clause(horizon int, r Risk) string {
	over := fmt.Sprintf(" over the %d weeks", horizon)
	switch b.limit {
	case lossLimit:
		return fmt.Sprintf("has a %s chance of losing money (the policy allows %s)", pct(b.value), pct(b.bound))
	case downsideLimit:
		return fmt.Sprintf("%s%s at its %s (the policy %s there)",
			lossOrGain(b.value), over, percentile(r.DownsideLevel), accepts(b.bound))
	case cvarLimit:
		return fmt.Sprintf("%s on average%s in its worst %s of outcomes (the policy %s)",
			lossOrGain(b.value), over, pct(r.CVaRLevel), accepts(b.bound))
	default:
		if b.value < 0 {
			return fmt.Sprintf("is expected to lose %s%s (the policy asks for an expected gain of at least %s)", money(-b.value), over, money(b.bound))
		}
		return fmt.Sprintf("is expected to gain only %s%s (the policy asks for at least %s)", money(b.value), over, money(b.bound))
	}
}

func lossOrGain(v float64) string {
	if v < 0 {
		return "loses " + money(-v)
	}
	return "gains only " + money(v)
}

func accepts(bound float64) string {
	if bound <= 0 {
		return "accepts a loss of at most " + money(-bound)
	}
	return "asks for a gain of at least " + money(bound)
}

func clauses(bs []breach, horizon int, r Risk) string {
	w := make([]string, len(bs))
	for i, b := range bs {
		w[i] = b.clause(horizon, r)
	}
	return joinAnd(w)
}

// movePhrase describes channel k's own move of amount per week (signed):
// "moving 8,000/week into video (funded from search and tv)".
func movePhrase(channel string, amount float64, more bool, others []string) string {
	q := ""
	if more {
		q = "more than "
	}
	if amount > 0 {
		s := fmt.Sprintf("moving %s%s into %s", q, perWeek(amount), channel)
		if len(others) > 0 {
			s += " (funded from " + joinAnd(others) + ")"
		}
		return s
	}
	s := fmt.Sprintf("cutting %s by %s%s", channel, q, perWeek(-amount))
	if len(others) > 0 {
		s += " (moved to " + joinAnd(others) + ")"
	}
	return s
}

func statusWord(failed bool) string {
	if failed {
		return "failed"
	}
	return "warned"
}
