package optimize

import (
	"errors"
	"math"
	"slices"
	"strings"
	"testing"
)

func TestLoadPlanExample(t *testing.T) {
	p, err := LoadPlan("testdata/plan_example.yaml")
	if err != nil {
		t.Fatal(err)
	}
	// Every figure below is written in testdata/plan_example.yaml.
	if p.HorizonWeeks != 13 || p.Budget != (BudgetRule{Kind: BudgetTotal, Total: 2450000}) || p.AtMost {
		t.Errorf("horizon/budget: %+v", p)
	}
	if p.Objective != (Objective{Kind: CVaR, Level: 0.05, Weight: 0.5}) || p.Margin != 0.6 || p.ValuePerKPI != 40 {
		t.Errorf("objective/economics: %+v", p)
	}
	search := ChannelPlan{Current: 38000, HasCurrent: true, Min: 19000, Max: 57000, MaxChange: 0.5}
	if p.Channels["search"] != search {
		t.Errorf("search: %+v", p.Channels["search"])
	}
	if tv := p.Channels["tv"]; !tv.Locked || tv.HasCurrent || !math.IsInf(tv.Max, 1) || !math.IsInf(tv.MaxChange, 1) {
		t.Errorf("tv: %+v", tv)
	}
	if g := p.Groups; len(g) != 1 || g[0].Name != "brand" || !slices.Equal(g[0].Channels, []string{"tv", "online_video"}) ||
		g[0].MinShare != 0.3 || g[0].MaxShare != 0.6 {
		t.Errorf("groups: %+v", g)
	}

	// The model supplies the status quo of channels the plan leaves open:
	// tv at 40,000 a week, online_video at 60,000, display at 30,000.
	prob, err := p.Resolve([]string{"search", "tv", "online_video", "display"}, []float64{35000, 40000, 60000, 30000})
	if err != nil {
		t.Fatal(err)
	}
	c := prob.Constraints
	if c.Budget != 2450000 || c.Horizon != 13 || c.AtMost {
		t.Errorf("constraints: %+v", c)
	}
	l, u := c.Box()
	// search: max(19,000, 38,000·(1−0.5)) to min(57,000, 38,000·1.5); tv locked at the model's 40,000.
	wantL, wantU := []float64{19000, 40000, 0, 0}, []float64{57000, 40000, math.Inf(1), math.Inf(1)}
	if !slices.Equal(l, wantL) || !slices.Equal(u, wantU) {
		t.Errorf("box %v %v, want %v %v", l, u, wantL, wantU)
	}
	if c.Channels[0].Current != 38000 || c.Channels[1].Current != 40000 {
		t.Errorf("current: the plan's 38,000 overrides the model's 35,000, tv keeps the model's: %+v", c.Channels)
	}
	if g := c.Groups; len(g) != 1 || !slices.Equal(g[0].Members, []int{1, 2}) {
		t.Errorf("groups: %+v", g)
	}
	if prob.Economics != (Economics{Horizon: 13, Margin: 0.6, ValuePerKPI: 40}) {
		t.Errorf("economics: %+v", prob.Economics)
	}
}

func TestResolveBudgetRules(t *testing.T) {
	// Status quo 10,000 + 30,000 a week over 13 weeks: 520,000.
	model, cur := []string{"a", "b"}, []float64{10000, 30000}
	cases := []struct {
		src  string
		want float64
	}{
		{"channels: {a: {max: 50000}}\n", 520000},
		{"budget_change: 0.05\n", 546000},
		{"budget_change: -0.1\nhorizon_weeks: 10\n", 360000},
		{"budget: 600000\nbudget_mode: at_most\n", 600000},
	}
	for _, c := range cases {
		p, err := ParsePlan([]byte(c.src), "plan.yaml")
		if err != nil {
			t.Fatalf("%q: %v", c.src, err)
		}
		prob, err := p.Resolve(model, cur)
		if err != nil {
			t.Fatalf("%q: %v", c.src, err)
		}
		if got := prob.Constraints.Budget; math.Abs(got-c.want) > 1e-9*c.want {
			t.Errorf("%q: budget %v, want %v", c.src, got, c.want)
		}
	}
}

func TestParsePlanErrors(t *testing.T) {
	cases := []struct{ name, src, want string }{
		{"unknown key", "horizon_weeks: 13\nbudgett: 5\n", "plan.yaml:2:1: budgett: unknown key"},
		{"unknown channel key", "channels:\n  search: {curent: 5}\n", "plan.yaml:2:12: channels.search.curent: unknown key"},
		{"unknown group key", "groups:\n  - {name: b, channels: [x], share: 0.2}\n", "plan.yaml:2:30: groups[0].share: unknown key"},
		{"wrong type", "budget: lots\n", "plan.yaml:1: cannot unmarshal"},
		{"negative budget", "budget: -5\n", "plan.yaml:1:1: budget: budget -5 must not be negative"},
		{"budget change below -1", "budget_change: -1.5\n", "plan.yaml:1:1: budget_change: budget_change -1.5 must be at least -1"},
		{"both budgets", "budget: 5\nbudget_change: 0.1\n", "plan.yaml:2:1: budget_change: give budget or budget_change, not both"},
		{"budget mode", "budget_mode: upto\n", `plan.yaml:1:1: budget_mode: budget_mode "upto": want equal or at_most`},
		{"min above max", "channels:\n  tv: {min: 10, max: 5}\n", "plan.yaml:2:17: channels.tv.max: max 5 is below min 10"},
		{"negative max_change", "channels:\n  tv:\n    max_change: -0.2\n", "plan.yaml:3:5: channels.tv.max_change: max_change -0.2 must not be negative"},
		{"negative current", "channels:\n  tv: {current: -1}\n", "plan.yaml:2:8: channels.tv.current: current -1 must not be negative"},
		{"infinite max", "channels:\n  tv: {max: .inf}\n", "plan.yaml:2:13: channels.tv.max: .inf is not a finite number"},
		{"share above 1", "groups:\n  - {name: b, channels: [x], min_share: 1.2}\n", "plan.yaml:2:30: groups[0].min_share: min_share 1.2 must lie in [0, 1]"},
		{"shares crossed", "groups:\n  - {name: b, channels: [x], min_share: 0.5, max_share: 0.2}\n", "groups[0].max_share: max_share 0.2 is below min_share 0.5"},
		{"group without name", "groups:\n  - {channels: [x]}\n", "plan.yaml:2:5: groups[0]: group needs a name"},
		{"group twice", "groups:\n  - {name: b, channels: [x]}\n  - {name: b, channels: [y]}\n", `plan.yaml:3:6: groups[1].name: group "b" is given twice`},
		{"group empty", "groups:\n  - {name: b}\n", "groups[0]: group b lists no channels"},
		{"channel twice in group", "groups:\n  - {name: b, channels: [x, x]}\n", `plan.yaml:2:29: groups[0].channels[1]: channel "x" is listed twice`},
		{"bad objective", "objective: cvar:0.05\n", `plan.yaml:1:1: objective: objective "cvar:0.05": want expected, quantile:q or cvar:alpha:weight`},
		{"quantile level", "objective: quantile:1.5\n", "objective: objective \"quantile:1.5\": quantile level 1.5 must lie strictly between 0 and 1"},
		{"cvar weight", "objective: cvar:0.05:-1\n", "weight -1 must not be negative"},
		{"zero margin", "margin: 0\n", "plan.yaml:1:1: margin: margin 0 must be a positive number"},
		{"horizon", "horizon_weeks: 0\n", "plan.yaml:1:1: horizon_weeks: horizon 0 weeks must be between 1 and 104"},
		{"horizon too long", "horizon_weeks: 100000000\n", "plan.yaml:1:1: horizon_weeks: horizon 100000000 weeks must be between 1 and 104"},
		{"margin above 1", "margin: 1.5\n", "plan.yaml:1:1: margin: margin 1.5 must be in (0, 1]"},
		{"empty", "", "plan.yaml: file is empty"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParsePlan([]byte(c.src), "plan.yaml")
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v\nwant it to contain %q", err, c.want)
			}
		})
	}
}

func TestResolveErrors(t *testing.T) {
	model := []string{"search", "tv", "online_video"}
	cur := []float64{38000, 40000, 30000}
	cases := []struct{ name, src, want string }{
		{"channel not in model", "channels:\n  search: {max: 1e6}\n  radio: {max: 5}\n",
			`plan.yaml:3:3: channels.radio: channel "radio" is not in the model (model channels: search, tv, online_video)`},
		{"group channel not in model", "groups:\n  - {name: brand, channels: [tv, podcast]}\n",
			`plan.yaml:2:34: groups[0].channels[1]: group brand: channel "podcast" is not in the model`},
		// The budget against every channel's upper bound.
		{"budget above the bounds", "budget: 2450000\nchannels:\n  search: {max: 57000}\n  tv: {locked: true}\n  online_video: {max: 53000}\n",
			"plan.yaml: infeasible: budget 2,450,000 over 13 weeks needs weekly spend 188,462 but the channel bounds allow at most 150,000 (search max 57,000, tv locked at 40,000, online_video max 53,000)"},
		{"budget below the bounds", "budget: 500000\nchannels:\n  search: {min: 19000}\n  tv: {locked: true}\n",
			"plan.yaml: infeasible: budget 500,000 over 13 weeks needs weekly spend 38,462 but the channel bounds need at least 59,000 (search min 19,000, tv locked at 40,000)"},
		{"ceiling below the bounds", "budget: 500000\nbudget_mode: at_most\nchannels:\n  search: {max_change: 0.5}\n  tv: {locked: true}\n",
			"budget 500,000 over 13 weeks allows at most weekly spend 38,462 but the channel bounds need at least 59,000 (search max_change 0.5 from 38,000 needs at least 19,000, tv locked at 40,000)"},
		// One group against the budget and its channels' bounds.
		{"group min share against locks", "budget: 1300000\nchannels:\n  tv: {locked: true, current: 10000}\n  online_video: {max: 5000}\ngroups:\n  - {name: brand, channels: [tv, online_video], min_share: 0.3}\n",
			"plan.yaml: infeasible: group brand min_share 0.3 needs at least 30,000 a week in tv, online_video but they allow at most 15,000 (tv locked at 10,000, online_video max 5,000)"},
		{"group max share against minimums", "channels:\n  tv: {locked: true}\ngroups:\n  - {name: brand, channels: [tv, online_video], max_share: 0.2}\n",
			"group brand max_share 0.2 allows at most 21,600 a week in tv, online_video but they need at least 40,000 (tv locked at 40,000)"},
		{"channel's own limits", "channels:\n  search: {min: 30000, max_change: 0.1, current: 20000}\n",
			"plan.yaml: infeasible: channel search: search min 30,000 but search max_change 0.1 from 20,000 allows at most 22,000"},
		{"lock outside max", "channels:\n  tv: {locked: true, max: 30000}\n",
			"channel tv: tv locked at 40,000 but tv max 30,000"},
		// Two overlapping groups that each fit alone: the certificate names them.
		{"overlapping groups", "channels:\n  tv: {max: 0}\ngroups:\n  - {name: brand, channels: [search, tv], min_share: 0.6}\n  - {name: video, channels: [tv, online_video], min_share: 0.6}\n",
			"budget 1,404,000, group brand min_share 0.6 and group video min_share 0.6 cannot all hold"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p, err := ParsePlan([]byte(c.src), "plan.yaml")
			if err != nil {
				t.Fatal(err)
			}
			_, err = p.Resolve(model, cur)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v\nwant it to contain %q", err, c.want)
			}
			if infeasible := !strings.Contains(c.want, "not in the model"); infeasible != errors.Is(err, ErrInfeasible) {
				t.Fatalf("errors.Is(%v, ErrInfeasible) = %v, want %v", err, !infeasible, infeasible)
			}
		})
	}
}

func FuzzParsePlan(f *testing.F) {
	f.Add([]byte("budget: 100\nchannels:\n  a: {current: 5, min: 1, max: 9}\ngroups:\n  - {name: g, channels: [a, b], min_share: 0.2}\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		p, err := ParsePlan(data, "f.yaml")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "f.yaml") {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		// Resolve against a model holding every channel the plan names.
		var names []string
		for name := range p.Channels {
			names = append(names, name)
		}
		for _, g := range p.Groups {
			names = append(names, g.Channels...)
		}
		slices.Sort(names)
		names = slices.Compact(names)
		cur := make([]float64, len(names))
		for i := range cur {
			cur[i] = 1000
		}
		if _, err := p.Resolve(names, cur); err != nil && !strings.HasPrefix(err.Error(), "f.yaml") {
			t.Fatalf("error does not name the file: %v", err)
		}
	})
}
