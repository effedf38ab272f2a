package optimize

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"go.yaml.in/yaml/v3"

	"sluice/internal/boundedio"
	"sluice/internal/strictyaml"
)

// Plan is a plan file: what the media team may and may not do next quarter.
//
//	horizon_weeks: 13            # weeks planned; default 13
//	budget: 2450000              # total spend over the horizon, or
//	budget_change: 0.05          # +5% against the status quo; neither keeps its total
//	budget_mode: equal           # equal (default) or at_most (spend up to the budget)
//	channels:
//	  search: {current: 38000, min: 19000, max: 57000, max_change: 0.5}
//	  tv:     {locked: true}
//	groups:
//	  - {name: brand, channels: [tv, online_video], min_share: 0.3, max_share: 0.6}
//	objective: expected          # or quantile:0.1, or cvar:0.05:0.5 (alpha, weight)
//	margin: 1.0
//	value_per_kpi: 1.0
//	currency: EUR                # names the currency of every amount; a label only
//
// Channel amounts are weekly spend. Channels the file does not list are
// bounded only by w >= 0.
type Plan struct {
	HorizonWeeks int
	Budget       BudgetRule
	AtMost       bool                   // budget_mode: at_most
	Channels     map[string]ChannelPlan // keyed by channel name, case kept
	Groups       []GroupPlan
	Objective    Objective
	Margin       float64
	ValuePerKPI  float64
	Currency     string // e.g. "EUR": a label for people, never converted; "" when not given

	source                          string
	valueSet, marginSet, horizonSet bool
	order                           []string              // channel keys in file order
	nodes                           map[string]*yaml.Node // key path → key node, for positions
}

// MaxHorizonWeeks bounds a plan's horizon as the model spec bounds its own.
const MaxHorizonWeeks = 104

// ValueSet and MarginSet report whether the file gave value_per_kpi and
// margin (rather than leaving the defaults of 1).
func (p *Plan) ValueSet() bool  { return p.valueSet }
func (p *Plan) MarginSet() bool { return p.marginSet }

// HorizonSet reports whether the file gave horizon_weeks.
func (p *Plan) HorizonSet() bool { return p.horizonSet }

// Locate returns "file:line:column" of key (a dotted path such as
// "value_per_kpi") in the plan, or the file name when the key is absent.
func (p *Plan) Locate(key string) string {
	if n := p.nodes[key]; n != nil {
		return fmt.Sprintf("%s:%d:%d", p.source, n.Line, n.Column)
	}
	return p.source
}

// BreakEvenMROI is the marginal ROI at which a channel pays for itself
// under the plan's economics, in KPI value per currency (the unit of the
// fit's and validation's marginal ROI, which already multiply by the value
// per KPI unit): 1/margin. In KPI units per currency it is
// 1/(margin · value_per_kpi); in profit per currency (the allocator's
// table) it is 1.
func (p *Plan) BreakEvenMROI() float64 { return 1 / p.Margin }

// Source is the plan's file name, for messages.
func (p *Plan) Source() string { return p.source }

// BudgetRule says how the total budget is set.
type BudgetRule struct {
	Kind   BudgetKind
	Total  float64 // for BudgetTotal: the total over the horizon
	Change float64 // for BudgetChange: the relative change, 0.05 for +5%
}

// BudgetKind is how the plan file sets the budget.
type BudgetKind int

const (
	KeepTotal    BudgetKind = iota // neither key: the status quo's total
	BudgetTotal                    // budget: a total over the horizon
	BudgetChange                   // budget_change: relative to the status quo's total
)

// ChannelPlan is one channel's entry.
type ChannelPlan struct {
	Current    float64 // status quo weekly spend, when HasCurrent
	HasCurrent bool
	Min        float64 // 0 when not given
	Max        float64 // +Inf when not given
	MaxChange  float64 // +Inf when not given
	Locked     bool
}

// GroupPlan is one group's entry.
type GroupPlan struct {
	Name     string
	Channels []string
	MinShare float64 // 0 when not given
	MaxShare float64 // 1 when not given
}

// planFile is the file's shape for strictyaml; pointers tell absent keys.
type planFile struct {
	HorizonWeeks *int                   `yaml:"horizon_weeks"`
	Budget       *float64               `yaml:"budget"`
	BudgetChange *float64               `yaml:"budget_change"`
	BudgetMode   *string                `yaml:"budget_mode"`
	Channels     map[string]channelFile `yaml:"channels"`
	Groups       []groupFile            `yaml:"groups"`
	Objective    *string                `yaml:"objective"`
	Margin       *float64               `yaml:"margin"`
	ValuePerKPI  *float64               `yaml:"value_per_kpi"`
	Currency     *string                `yaml:"currency"`
}

type channelFile struct {
	Current   *float64 `yaml:"current"`
	Min       *float64 `yaml:"min"`
	Max       *float64 `yaml:"max"`
	MaxChange *float64 `yaml:"max_change"`
	Locked    *bool    `yaml:"locked"`
}

type groupFile struct {
	Name     *string  `yaml:"name"`
	Channels []string `yaml:"channels"`
	MinShare *float64 `yaml:"min_share"`
	MaxShare *float64 `yaml:"max_share"`
}

// LoadPlan reads and checks the plan file at path.
func LoadPlan(path string) (*Plan, error) {
	data, err := boundedio.ReadFile(path, boundedio.MaxInput)
	if err != nil {
		return nil, err
	}
	return ParsePlan(data, path)
}

// ParsePlan reads and checks a plan file's contents; source names it in
// messages. Unknown keys, wrong types and values no plan can mean are
// refused with file:line:column and the key path. Whether the channels
// exist is checked by Resolve, which knows the model.
func ParsePlan(data []byte, source string) (*Plan, error) {
	var f planFile
	if err := strictyaml.Decode(data, source, &f); err != nil {
		return nil, err
	}
	p := &Plan{source: source, nodes: map[string]*yaml.Node{}, HorizonWeeks: 13, Margin: 1, ValuePerKPI: 1,
		Channels: map[string]ChannelPlan{}}
	var root yaml.Node
	if err := yaml.Unmarshal(data, &root); err == nil {
		p.index(&root, "")
	}
	var rest []string // channels the index missed (written through an alias)
	for name := range f.Channels {
		if !slices.Contains(p.order, name) {
			rest = append(rest, name)
		}
	}
	slices.Sort(rest)
	p.order = append(p.order, rest...)
	bad := func(path, format string, args ...any) error { return p.errorAt(path, fmt.Sprintf(format, args...)) }
	num := func(path string, v *float64, lo float64, what string) error {
		switch {
		case v == nil:
			return nil
		case math.IsNaN(*v) || math.IsInf(*v, 0):
			return bad(path, "%v is not a finite number", *v)
		case *v < lo && lo == 0:
			return bad(path, "%s %v must not be negative", what, *v)
		case *v < lo:
			return bad(path, "%s %v must be at least %v (the budget cannot be negative)", what, *v, lo)
		}
		return nil
	}
	if f.HorizonWeeks != nil {
		if *f.HorizonWeeks < 1 || *f.HorizonWeeks > MaxHorizonWeeks {
			return nil, bad("horizon_weeks", "horizon %d weeks must be between 1 and %d (two years), as in the model spec", *f.HorizonWeeks, MaxHorizonWeeks)
		}
		p.HorizonWeeks = *f.HorizonWeeks
		p.horizonSet = true
	}
	switch {
	case f.Budget != nil && f.BudgetChange != nil:
		return nil, bad("budget_change", "give budget or budget_change, not both")
	case f.Budget != nil:
		if err := num("budget", f.Budget, 0, "budget"); err != nil {
			return nil, err
		}
		p.Budget = BudgetRule{Kind: BudgetTotal, Total: *f.Budget}
	case f.BudgetChange != nil:
		if err := num("budget_change", f.BudgetChange, -1, "budget_change"); err != nil {
			return nil, err
		}
		p.Budget = BudgetRule{Kind: BudgetChange, Change: *f.BudgetChange}
	}
	if f.BudgetMode != nil {
		switch *f.BudgetMode {
		case "equal":
		case "at_most":
			p.AtMost = true
		default:
			return nil, bad("budget_mode", "budget_mode %q: want equal or at_most", *f.BudgetMode)
		}
	}
	for _, name := range p.order {
		c := f.Channels[name]
		path := "channels." + name
		if strings.TrimSpace(name) == "" {
			return nil, bad(path, "channel name is empty")
		}
		cp := ChannelPlan{Max: math.Inf(1), MaxChange: math.Inf(1)}
		for _, v := range []struct {
			key string
			v   *float64
			dst *float64
		}{{"current", c.Current, &cp.Current}, {"min", c.Min, &cp.Min}, {"max", c.Max, &cp.Max}, {"max_change", c.MaxChange, &cp.MaxChange}} {
			if err := num(path+"."+v.key, v.v, 0, v.key); err != nil {
				return nil, err
			}
			if v.v != nil {
				*v.dst = *v.v
			}
		}
		cp.HasCurrent = c.Current != nil
		if c.Locked != nil {
			cp.Locked = *c.Locked
		}
		if cp.Min > cp.Max {
			return nil, bad(path+".max", "max %s is below min %s", money(cp.Max), money(cp.Min))
		}
		p.Channels[name] = cp
	}
	seen := map[string]bool{}
	for i, g := range f.Groups {
		path := fmt.Sprintf("groups[%d]", i)
		if g.Name == nil || strings.TrimSpace(*g.Name) == "" {
			return nil, bad(path, "group needs a name")
		}
		if seen[*g.Name] {
			return nil, bad(path+".name", "group %q is given twice", *g.Name)
		}
		seen[*g.Name] = true
		if len(g.Channels) == 0 {
			return nil, bad(path, "group %s lists no channels", *g.Name)
		}
		for j, ch := range g.Channels {
			if slices.Contains(g.Channels[:j], ch) {
				return nil, bad(fmt.Sprintf("%s.channels[%d]", path, j), "channel %q is listed twice", ch)
			}
		}
		gp := GroupPlan{Name: *g.Name, Channels: g.Channels, MaxShare: 1}
		for _, v := range []struct {
			key string
			v   *float64
			dst *float64
		}{{"min_share", g.MinShare, &gp.MinShare}, {"max_share", g.MaxShare, &gp.MaxShare}} {
			if v.v == nil {
				continue
			}
			if math.IsNaN(*v.v) || *v.v < 0 || *v.v > 1 {
				return nil, bad(path+"."+v.key, "%s %v must lie in [0, 1]", v.key, *v.v)
			}
			*v.dst = *v.v
		}
		if gp.MinShare > gp.MaxShare {
			return nil, bad(path+".max_share", "max_share %v is below min_share %v", gp.MaxShare, gp.MinShare)
		}
		p.Groups = append(p.Groups, gp)
	}
	if f.Objective != nil {
		o, err := ParseObjective(*f.Objective)
		if err != nil {
			return nil, bad("objective", "%v", err)
		}
		p.Objective = o
	}
	for _, v := range []struct {
		key string
		v   *float64
		dst *float64
	}{{"margin", f.Margin, &p.Margin}, {"value_per_kpi", f.ValuePerKPI, &p.ValuePerKPI}} {
		if v.v == nil {
			continue
		}
		if math.IsNaN(*v.v) || math.IsInf(*v.v, 0) || *v.v <= 0 {
			return nil, bad(v.key, "%s %v must be a positive number", v.key, *v.v)
		}
		if v.key == "margin" && *v.v > 1 {
			return nil, bad(v.key, "margin %v must be in (0, 1]: it is the share of the KPI's value that is profit", *v.v)
		}
		*v.dst = *v.v
	}
	if f.Currency != nil {
		c := strings.TrimSpace(*f.Currency)
		if c == "" || len(c) > 12 || strings.ContainsAny(c, "\n\r\t<>&\"'") {
			return nil, bad("currency", "currency %q: want a short label such as EUR, USD or GBP", *f.Currency)
		}
		p.Currency = c
	}
	p.valueSet, p.marginSet = f.ValuePerKPI != nil, f.Margin != nil
	return p, nil
}

// Resolve turns the plan into a Problem for the model's channels (in the
// model's order). defaultCurrent is each channel's status quo weekly spend
// when the plan gives no current (the model supplies the mean of the last
// 13 weeks). The Problem's Response and Point are left for the caller. The
// constraints are checked; an infeasible plan returns an error wrapping
// ErrInfeasible.
func (p *Plan) Resolve(channels []string, defaultCurrent []float64) (*Problem, error) {
	if len(channels) != len(defaultCurrent) {
		panic("optimize: channel names and current spend differ in length")
	}
	index := make(map[string]int, len(channels))
	for k, name := range channels {
		if _, dup := index[name]; dup {
			panic("optimize: model channel " + name + " given twice")
		}
		index[name] = k
	}
	known := strings.Join(channels, ", ")
	for _, name := range p.order {
		if _, ok := index[name]; !ok {
			return nil, p.errorAt("channels."+name, fmt.Sprintf("channel %q is not in the model (model channels: %s)", name, known))
		}
	}
	cons := Constraints{Horizon: p.HorizonWeeks, AtMost: p.AtMost, Channels: make([]Limits, len(channels))}
	var total float64
	for k, name := range channels {
		lim := Limits{Name: name, Current: defaultCurrent[k], Max: math.Inf(1), MaxChange: math.Inf(1)}
		if cp, ok := p.Channels[name]; ok {
			if cp.HasCurrent {
				lim.Current = cp.Current
			}
			lim.Min, lim.Max, lim.MaxChange, lim.Locked = cp.Min, cp.Max, cp.MaxChange, cp.Locked
		}
		if math.IsNaN(lim.Current) || math.IsInf(lim.Current, 0) || lim.Current < 0 {
			return nil, fmt.Errorf("%s: channel %s: the model's current weekly spend %v is not a non-negative number; set channels.%s.current",
				p.source, name, lim.Current, name)
		}
		total += lim.Current
		cons.Channels[k] = lim
	}
	H := float64(p.HorizonWeeks)
	switch p.Budget.Kind {
	case BudgetTotal:
		cons.Budget = p.Budget.Total
	case BudgetChange:
		cons.Budget = (1 + p.Budget.Change) * H * total
	default:
		cons.Budget = H * total
	}
	for i, g := range p.Groups {
		grp := Group{Name: g.Name, MinShare: g.MinShare, MaxShare: g.MaxShare}
		for j, name := range g.Channels {
			k, ok := index[name]
			if !ok {
				return nil, p.errorAt(fmt.Sprintf("groups[%d].channels[%d]", i, j),
					fmt.Sprintf("group %s: channel %q is not in the model (model channels: %s)", g.Name, name, known))
			}
			grp.Members = append(grp.Members, k)
		}
		cons.Groups = append(cons.Groups, grp)
	}
	if err := cons.Check(); err != nil {
		return nil, fmt.Errorf("%s: %w", p.source, err)
	}
	return &Problem{
		Economics:   Economics{Horizon: p.HorizonWeeks, Margin: p.Margin, ValuePerKPI: p.ValuePerKPI},
		Constraints: cons,
		Objective:   p.Objective,
	}, nil
}

// errorAt returns a strictyaml.Error at the key path's position.
func (p *Plan) errorAt(path, msg string) error {
	e := &strictyaml.Error{File: p.source, Path: path, Msg: msg}
	if n := p.nodes[path]; n != nil {
		e.Line, e.Column = n.Line, n.Column
	}
	return e
}

// index records the key node of every path, and the channels' file order.
func (p *Plan) index(n *yaml.Node, path string) {
	switch n.Kind {
	case yaml.DocumentNode:
		for _, c := range n.Content {
			p.index(c, path)
		}
	case yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, v := n.Content[i], n.Content[i+1]
			sub := k.Value
			if path != "" {
				sub = path + "." + k.Value
			}
			if _, ok := p.nodes[sub]; !ok {
				p.nodes[sub] = k
			}
			if path == "channels" && !slices.Contains(p.order, k.Value) {
				p.order = append(p.order, k.Value)
			}
			p.index(v, sub)
		}
	case yaml.SequenceNode:
		for i, c := range n.Content {
			sub := fmt.Sprintf("%s[%d]", path, i)
			if _, ok := p.nodes[sub]; !ok {
				p.nodes[sub] = c
			}
			p.index(c, sub)
		}
	}
}
