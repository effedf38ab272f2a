package policies

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/internal/strictyaml"
	"sluice/validation"
)

// base is a small valid policy; the refusal cases below change one line.
// Line numbers matter: the cases assert them.
const base = `version: 1
risk:
  max_loss_probability: 0.2
  downside_level: 0.05
  downside_floor_share: -0.05
  cvar_level: 0.05
  cvar_floor: -1000
support:
  high_multiple: 1.2
  low_multiple: 0.8
min_move:
  per_week: 100
evidence:
  exploration_band: 0.1
  families:
    lift: {on_fail: cap}
  checks:
    holdout_mape: {on_warn: refuse}
  waivers:
    analytics_lead:
      families: [stability]
      checks: [lift_tv]
roles:
  analytics_lead: {}
  finance_partner:
    keys: ['keys/finance_partner.pem sha256:e2783178f9dd1b77a67ca60d0571731f8a87ac3480189607195e5590314608af']
signoffs:
  - name: always
    roles: [finance_partner]
    when: {always: true}
  - name: big
    roles: [analytics_lead]
    when: {moved_above: 50000}
`

func TestParseBase(t *testing.T) {
	p, err := Parse([]byte(base), "p.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if p.Name != "p" || p.Source != "p.yaml" || string(p.Raw) != base {
		t.Fatalf("name %q source %q, raw kept %v", p.Name, p.Source, string(p.Raw) == base)
	}
	if f, ok := p.Risk.DownsideFloorFor(10000); !ok || f != -500 {
		t.Errorf("downside floor for 10000 moved: %v %v, want -500 (5%% of the money moved)", f, ok)
	}
	// Both floors given: the higher one binds.
	p.Risk.CVaRFloorShare = ptr(-0.2)
	if f, _ := p.Risk.CVaRFloorFor(10000); f != -1000 {
		t.Errorf("cvar floor %v, want the fixed -1000 (above -0.2 × 10000)", f)
	}
	if f, _ := p.Risk.CVaRFloorFor(1000); f != -200 {
		t.Errorf("cvar floor %v, want -200 (above the fixed -1000)", f)
	}
	if _, ok := p.Risk.CVaRFloorFor(0); !ok {
		t.Error("cvar floor given but reported absent")
	}
	p.Risk.DownsideFloorShare = nil
	if _, ok := p.Risk.DownsideFloorFor(5); ok {
		t.Error("no downside floor given but one reported")
	}
	if got := p.MinMove.Threshold(1e6); got != 100 {
		t.Errorf("min move %v, want 100", got)
	}
}

func TestParseRefusals(t *testing.T) {
	cases := []struct {
		name     string
		old, new string // line of base to replace ("" new deletes it)
		path     string
		line     int
		msg      string
	}{
		{"loss probability zero", "max_loss_probability: 0.2", "max_loss_probability: 0", "risk.max_loss_probability", 3, "strictly between 0 and 1"},
		{"loss probability one", "max_loss_probability: 0.2", "max_loss_probability: 1", "risk.max_loss_probability", 3, "strictly between 0 and 1"},
		{"loss probability percent", "max_loss_probability: 0.2", "max_loss_probability: 20", "risk.max_loss_probability", 3, "got 20"},
		{"downside level half", "downside_level: 0.05", "downside_level: 0.5", "risk.downside_level", 4, "between 0 and 0.5"},
		{"downside level negative", "downside_level: 0.05", "downside_level: -0.05", "risk.downside_level", 4, "between 0 and 0.5"},
		{"downside share beyond all", "downside_floor_share: -0.05", "downside_floor_share: -2", "risk.downside_floor_share", 5, "[-1, 1]"},
		{"cvar level", "cvar_level: 0.05", "cvar_level: 0.6", "risk.cvar_level", 6, "(0, 0.5]"},
		{"cvar level missing", "  cvar_level: 0.05\n", "", "risk.cvar_level", 2, "got 0"},
		{"cvar floor nan", "cvar_floor: -1000", "cvar_floor: .nan", "risk.cvar_floor", 7, "finite"},
		{"high multiple below one", "high_multiple: 1.2", "high_multiple: 0.9", "support.high_multiple", 9, "at least 1"},
		{"low multiple above one", "low_multiple: 0.8", "low_multiple: 1.5", "support.low_multiple", 10, "[0, 1]"},
		{"min move negative", "per_week: 100", "per_week: -1", "min_move.per_week", 12, "negative"},
		{"exploration band negative", "exploration_band: 0.1", "exploration_band: -0.1", "evidence.exploration_band", 14, "[0, 1]"},
		{"unknown family", "lift: {on_fail: cap}", "lyft: {on_fail: cap}", "evidence.families.lyft", 16, `unknown check family "lyft"`},
		{"unknown action", "lift: {on_fail: cap}", "lift: {on_fail: block}", "evidence.families.lift.on_fail", 16, `unknown action "block"`},
		{"unknown action on check", "holdout_mape: {on_warn: refuse}", "holdout_mape: {on_warn: ignore}", "evidence.checks.holdout_mape.on_warn", 18, "unknown action"},
		{"waiver by undefined role", "    analytics_lead:\n      families", "    analyst:\n      families", "evidence.waivers.analyst", 20, `role "analyst" is not defined`},
		{"waiver for unknown family", "families: [stability]", "families: [stabilty]", "evidence.waivers.analytics_lead.families[0]", 21, "unknown check family"},
		{"empty key", "keys: ['keys/finance_partner.pem sha256:e2783178f9dd1b77a67ca60d0571731f8a87ac3480189607195e5590314608af']", "keys: ['']", "roles.finance_partner.keys[0]", 26, "empty"},
		{"sign-off by undefined role", "roles: [finance_partner]\n    when: {always", "roles: [cfo]\n    when: {always", "signoffs[0].roles[0]", 29, `role "cfo" is not defined`},
		{"two conditions", "when: {always: true}", "when: {always: true, any_waiver: true}", "signoffs[0].when", 30, "found 2 (always, any_waiver)"},
		{"no condition", "when: {always: true}", "when: {always: false}", "signoffs[0].when", 30, "found 0"},
		{"duplicate rule name", "- name: big", "- name: always", "signoffs[1].name", 31, "already used by signoffs[0]"},
		{"no roles", "roles: [analytics_lead]", "roles: []", "signoffs[1].roles", 32, "list the roles"},
		{"negative threshold", "moved_above: 50000", "moved_above: -5", "signoffs[1].when.moved_above", 33, "negative"},
		{"unknown verdict", "moved_above: 50000", "verdict_in: [approve, reject]", "signoffs[1].when.verdict_in[1]", 33, `unknown verdict "reject"`},
		{"future version", "version: 1", "version: 2", "version", 1, "must be 1"},
		// strictyaml refusals: unknown key and wrong type, with the path.
		{"unknown key", "max_loss_probability: 0.2", "max_loss_probabilty: 0.2", "risk.max_loss_probabilty", 3, "unknown key"},
		{"wrong type", "downside_level: 0.05", "downside_level: low", "risk.downside_level", 4, "cannot unmarshal"},
		{"wrong type in list", "checks: [lift_tv]", "checks: {lift_tv: 1}", "evidence.waivers.analytics_lead.checks", 22, "cannot unmarshal"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !strings.Contains(base, c.old) {
				t.Fatalf("case does not match base: %q", c.old)
			}
			src := strings.Replace(base, c.old, c.new, 1)
			_, err := Parse([]byte(src), "p.yaml")
			var e *strictyaml.Error
			if !errors.As(err, &e) {
				t.Fatalf("error %v (%T), want a *strictyaml.Error", err, err)
			}
			if e.File != "p.yaml" || e.Path != c.path || e.Line != c.line || !strings.Contains(e.Msg, c.msg) {
				t.Fatalf("got %s\nwant p.yaml:%d ... %s: ...%s...", e, c.line, c.path, c.msg)
			}
		})
	}
}

func TestPresets(t *testing.T) {
	names := Names()
	for _, want := range []string{"cautious", "exploratory", "standard"} {
		if !contains(names, want) {
			t.Fatalf("presets %v lack %q", names, want)
		}
	}
	got := map[string]*Policy{}
	for _, n := range names {
		p, err := Preset(n)
		if err != nil {
			t.Fatalf("preset %s: %v", n, err)
		}
		if p.Name != n || p.Source != "preset:"+n || len(p.Raw) == 0 {
			t.Errorf("preset %s: name %q source %q", n, p.Name, p.Source)
		}
		// Re-parsing its own bytes gives the same policy (the record hashes Raw).
		q, err := Parse(p.Raw, "again.yaml")
		if err != nil || q.Risk.MaxLossProbability != p.Risk.MaxLossProbability || len(q.Signoffs) != len(p.Signoffs) {
			t.Errorf("preset %s does not re-parse to itself: %v", n, err)
		}
		if len(p.Signoffs) == 0 || p.Signoffs[0].When.Kinds()[0] != "always" {
			t.Errorf("preset %s: someone must sign every decision", n)
		}
		got[n] = p
	}
	// The presets are ordered by caution; a preset edited out of that order
	// is a mistake (common practice, no source).
	c, s, x := got["cautious"], got["standard"], got["exploratory"]
	if !(c.Risk.MaxLossProbability < s.Risk.MaxLossProbability && s.Risk.MaxLossProbability < x.Risk.MaxLossProbability) {
		t.Error("loss probability limits are not ordered cautious < standard < exploratory")
	}
	if !(c.Support.HighMultiple < s.Support.HighMultiple && s.Support.HighMultiple < x.Support.HighMultiple) {
		t.Error("support multiples are not ordered cautious < standard < exploratory")
	}
	if !(*c.Risk.DownsideFloorBudget > *s.Risk.DownsideFloorBudget && *s.Risk.DownsideFloorBudget > *x.Risk.DownsideFloorBudget) {
		t.Error("downside floors are not ordered cautious > standard > exploratory")
	}
	if !(*c.Risk.CVaRFloorBudget > *s.Risk.CVaRFloorBudget && *s.Risk.CVaRFloorBudget > *x.Risk.CVaRFloorBudget) {
		t.Error("CVaR floors are not ordered cautious > standard > exploratory")
	}
	// A more cautious policy acts on weaker evidence: a higher false-alarm rate.
	if !(c.Evidence.FalseAlarm.Fail > s.Evidence.FalseAlarm.Fail && s.Evidence.FalseAlarm.Fail > x.Evidence.FalseAlarm.Fail) {
		t.Error("false-alarm rates are not ordered cautious > standard > exploratory")
	}
	if _, err := Preset("reckless"); err == nil || !strings.Contains(err.Error(), "standard") {
		t.Errorf("unknown preset: %v, want a refusal listing the presets", err)
	}
}

// TestBudgetFloors: a floor set as a share of the quarter's budget is that
// share of Risk.Budget, and the highest floor binds (arithmetic).
func TestBudgetFloors(t *testing.T) {
	r := Risk{DownsideFloorBudget: ptr(-0.005), DownsideFloorShare: ptr(-0.05), Budget: 2_000_000}
	if f, ok := r.DownsideFloorFor(100_000); !ok || f != -5000 {
		t.Errorf("floor %v (%v): want -10,000 budget floor against -5,000 moved floor: the higher, -5,000", f, ok)
	}
	if f, _ := r.DownsideFloorFor(1_000_000); f != -10000 {
		t.Errorf("floor %v, want the budget floor -10,000 over the moved floor -50,000", f)
	}
	for _, bad := range []string{"cvar_floor_budget_share: -2", "downside_floor_budget_share: .nan"} {
		_, err := Parse([]byte(strings.Replace(base, "risk:\n", "risk:\n  "+bad+"\n", 1)), "p.yaml")
		if err == nil || !strings.Contains(err.Error(), "budget_share") {
			t.Errorf("%s: %v, want a refusal naming the key", bad, err)
		}
	}
	for _, bad := range []string{"false_alarm: {fail: 0, warn: 0.2}", "false_alarm: {fail: 0.2, warn: 0.1}"} {
		_, err := Parse([]byte(strings.Replace(base, "evidence:\n", "evidence:\n  "+bad+"\n", 1)), "p.yaml")
		if err == nil || !strings.Contains(err.Error(), "false_alarm") {
			t.Errorf("%s: %v, want a refusal at evidence.false_alarm", bad, err)
		}
	}
}

func TestActionFor(t *testing.T) {
	p, err := Parse([]byte(base), "p.yaml")
	if err != nil {
		t.Fatal(err)
	}
	p.Evidence.Checks["lift_tv"] = ActionRule{OnFail: Warn}
	cases := []struct {
		c    validation.Check
		want Action
	}{
		{validation.Check{Name: "x", Family: validation.Accuracy, Status: validation.Pass}, ""},
		{validation.Check{Name: "x", Family: validation.Accuracy, Status: validation.Fail}, Refuse}, // default on_fail
		{validation.Check{Name: "x", Family: validation.Accuracy, Status: validation.Warn}, Warn},   // default on_warn
		{validation.Check{Name: "x", Family: validation.Lift, Status: validation.Fail}, Cap},        // family
		{validation.Check{Name: "x", Family: validation.Lift, Status: validation.Warn}, Warn},       // family silent: default
		{validation.Check{Name: "lift_tv", Family: validation.Lift, Status: validation.Fail}, Warn}, // check beats family
		{validation.Check{Name: "holdout_mape", Family: validation.Accuracy, Status: validation.Warn}, Refuse},
	}
	for _, c := range cases {
		if got := p.Evidence.ActionFor(c.c); got != c.want {
			t.Errorf("%s %s %s: %q, want %q", c.c.Name, c.c.Family, c.c.Status, got, c.want)
		}
	}
	p.Evidence.OnFail = Cap
	if got := p.Evidence.ActionFor(validation.Check{Name: "x", Family: validation.Recovery, Status: validation.Fail}); got != Cap {
		t.Errorf("policy default on_fail cap: got %q", got)
	}
	waive := []struct {
		role string
		c    validation.Check
		want bool
	}{
		{"analytics_lead", validation.Check{Name: "stab", Family: validation.Stability}, true}, // by family
		{"analytics_lead", validation.Check{Name: "lift_tv", Family: validation.Lift}, true},   // by name
		{"analytics_lead", validation.Check{Name: "lift_tv2", Family: validation.Lift}, false},
		{"finance_partner", validation.Check{Name: "stab", Family: validation.Stability}, false},
	}
	for _, w := range waive {
		if got := p.Evidence.MayWaive(w.role, w.c); got != w.want {
			t.Errorf("%s may waive %s: %v, want %v", w.role, w.c.Name, got, w.want)
		}
	}
}

func TestLoadKeys(t *testing.T) {
	p, err := Load(filepath.Join("testdata", "with_keys.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	file, err := os.ReadFile(filepath.Join("testdata", "keys", "finance_partner.pem"))
	if err != nil {
		t.Fatal(err)
	}
	got, err := p.KeyPEM("finance_partner")
	if err != nil || len(got) != 1 || string(got[0]) != string(file) {
		t.Fatalf("finance_partner keys %q, %v; want the file's bytes", got, err)
	}
	got, err = p.KeyPEM("marketing_lead")
	if err != nil || len(got) != 1 || !strings.HasPrefix(string(got[0]), "-----BEGIN PUBLIC KEY-----\n") {
		t.Fatalf("inline key %q, %v", got, err)
	}
	if _, err := p.KeyPEM("cfo"); err == nil {
		t.Error("undefined role gave keys")
	}

	_, err = Load(filepath.Join("testdata", "missing_key.yaml"))
	var e *strictyaml.Error
	if !errors.As(err, &e) || e.Path != "roles.finance_partner.keys[1]" || e.Line != 12 || !strings.Contains(e.Msg, "nobody.pem") {
		t.Fatalf("missing key file: %v", err)
	}
}

func TestResolve(t *testing.T) {
	p, err := Resolve("cautious")
	if err != nil || p.Source != "preset:cautious" {
		t.Fatalf("preset by name: %v %v", p, err)
	}
	p, err = Resolve(filepath.Join("testdata", "with_keys.yaml"))
	if err != nil || p.Name != "with_keys" || p.Dir != "testdata" {
		t.Fatalf("file: %+v %v", p, err)
	}
	if _, err := Resolve("standrad"); err == nil || !strings.Contains(err.Error(), "neither a preset") {
		t.Fatalf("misspelt preset: %v", err)
	}
	if _, err := Resolve(filepath.Join("testdata", "absent.yaml")); !errors.Is(err, os.ErrNotExist) {
		t.Fatalf("absent file: %v", err)
	}
}

func ptr(v float64) *float64 { return &v }
