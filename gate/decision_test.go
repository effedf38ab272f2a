package gate

import (
	"encoding/json"
	"math"
	"strings"
	"testing"

	"sluice/validation"
)

// The decision's JSON names are the ones the record and the brief read.
func TestDecisionJSON(t *testing.T) {
	r := makeReview(tight, []float64{7000, 8000, 8000}, 200, 5, parsePolicy(t, loose))
	r.Evidence = liftFail("tv")
	d := run(t, r)
	b, err := json.Marshal(d)
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"verdict", "reasons", "policy", "moves", "risk", "checks", "waivers", "signoffs_required", "approved_plan", "plan_scale", "search"} {
		if _, ok := m[k]; !ok {
			t.Errorf("decision lacks %q", k)
		}
	}
	move := m["moves"].([]any)[1].(map[string]any)
	for _, k := range []string{"channel", "current", "proposed", "approved", "safe_step", "safe_step_per_week", "reasons"} {
		if _, ok := move[k]; !ok {
			t.Errorf("move lacks %q", k)
		}
	}
	risk := m["risk"].(map[string]any)
	for _, side := range []string{"proposed", "approved"} {
		rs := risk[side].(map[string]any)
		for _, k := range []string{"p_loss", "downside", "cvar", "expected_gain", "p05", "p50", "p95"} {
			if _, ok := rs[k]; !ok {
				t.Errorf("risk.%s lacks %q", side, k)
			}
		}
	}
	so := m["signoffs_required"].([]any)[0].(map[string]any)
	if so["role"] != "finance_partner" || so["rule"] != "every_decision" {
		t.Errorf("sign-off %v", so)
	}
	check := m["checks"].([]any)[1].(map[string]any)
	if check["name"] != "lift_tv" || check["action"] != "cap" || check["status"] != "fail" {
		t.Errorf("check %v", check)
	}
}

func TestReviewErrors(t *testing.T) {
	good := func() Review { return makeReview(tight, []float64{9000, 6000, 8000}, 20, 1, parsePolicy(t, loose)) }
	cases := []struct {
		name string
		edit func(*Review)
		want string
	}{
		{"negative proposal", func(r *Review) { r.Proposed[1] = -5 }, "video: proposed spend must be a finite number >= 0, got -5"},
		{"nan current", func(r *Review) { r.Current[0] = math.NaN() }, "search: current spend"},
		{"support upside down", func(r *Review) { r.Support[2] = SupportRange{5, 1} }, "tv: support high 1 is below support low 5"},
		{"duplicate channel", func(r *Review) { r.Channels[2] = "search" }, `name "search" is empty or used twice`},
		{"no horizon", func(r *Review) { r.Economics.Horizon = 0 }, "horizon must be at least one week"},
		{"cap on unknown channel", func(r *Review) {
			r.Evidence = validation.Evidence{Checks: []validation.Check{{Name: "lift_radio", Family: validation.Lift, Scope: "radio", Status: validation.Fail}}}
		}, `scoped to "radio", which is not a channel`},
	}
	for _, c := range cases {
		r := good()
		c.edit(&r)
		_, err := Run(r, Settings{})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want %q", c.name, err, c.want)
		}
	}
	defer func() {
		if p := recover(); p == nil || !strings.HasPrefix(p.(string), "gate: ") {
			t.Errorf("length mismatch: panic %v", p)
		}
	}()
	r := good()
	r.Proposed = r.Proposed[:2]
	Run(r, Settings{})
}

// Number words: thousands separators (common practice, no source), ordinal
// suffixes of English (11th–13th are irregular), percentages to one decimal.
func TestWords(t *testing.T) {
	cases := []struct{ got, want string }{
		{money(4200), "4,200"}, {money(-1234567.4), "-1,234,567"}, {money(999.5), "1,000"}, {money(42.123), "42.1"}, {money(0), "0"},
		{pct(0.23), "23%"}, {pct(0.025), "2.5%"}, {pct(0.1), "10%"},
		{percentile(0.05), "5th percentile"}, {percentile(0.01), "1st percentile"}, {percentile(0.02), "2nd percentile"},
		{percentile(0.03), "3rd percentile"}, {percentile(0.11), "11th percentile"}, {percentile(0.025), "2.5th percentile"},
		{joinAnd([]string{"a", "b", "c"}), "a, b and c"}, {joinAnd([]string{"a", "b"}), "a and b"},
		{movePhrase("video", 4200, true, []string{"search", "tv"}), "moving more than 4,200/week into video (funded from search and tv)"},
		{movePhrase("search", -3000, false, nil), "cutting search by 3,000/week"},
	}
	for _, c := range cases {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}
