package strictyaml

import (
	"strings"
	"testing"
)

type channel struct {
	Current float64 `yaml:"current"`
	Locked  bool    `yaml:"locked"`
}

type doc struct {
	Period   float64            `yaml:"period_weeks"`
	Horizon  int                `yaml:"horizon_weeks"`
	Channels map[string]channel `yaml:"channels"`
	Groups   []struct {
		Name string `yaml:"name"`
	} `yaml:"groups"`
}

func TestDecode(t *testing.T) {
	cases := []struct {
		name, in, want string // want: "" for success, else a substring of the error
	}{
		{"ok", "horizon_weeks: 13\nchannels:\n  TV: {current: 5, locked: true}\n", ""},
		{"unknown top", "horizon: 13\n", "plan.yaml:1:1: horizon: unknown key \"horizon\""},
		{"unknown nested", "channels:\n  TV:\n    curent: 5\n", "plan.yaml:3:5: channels.TV.curent: unknown key"},
		{"unknown in list", "groups:\n  - {name: a, share: 2}\n", "plan.yaml:2:15: groups[0].share: unknown key"},
		{"wrong type", "horizon_weeks: soon\n", "plan.yaml:1: cannot unmarshal"},
		{"duplicate", "horizon_weeks: 1\nhorizon_weeks: 2\n", "plan.yaml:2:1"},
		{"syntax", "channels: [\n", "plan.yaml:"},
		{"empty", "", "plan.yaml: file is empty"},
		// Non-finite floats (YAML 1.2 section 10.2.1.4 spellings) are refused at their line.
		{"nan", "horizon_weeks: 13\nperiod_weeks: .nan\n", "plan.yaml:2:15: period_weeks: .nan is not a finite number"},
		{"inf", "period_weeks: -.Inf\n", "plan.yaml:1:15: period_weeks: -.Inf is not a finite number"},
		{"quoted nan is a string", "period_weeks: '.nan'\n", "plan.yaml:1: cannot unmarshal"},
		// Errors yaml.v3 reports without a line get one.
		{"first-line syntax", "a: b: c\n", "plan.yaml:1: mapping values"},
		// yaml.v3 names line 2 here (where the block began); the tab is on line 3.
		{"tab in indentation", "horizon_weeks: 1\nperiod_weeks: 2\n\tchannels: {}\n", "plan.yaml:3:1: found a tab character"},
		{"control character", "horizon_weeks: 1\nperiod_weeks: \x01\n", "plan.yaml:2:15: control characters"},
		{"unknown anchor", "horizon_weeks: 1\nperiod_weeks: *p\n", "plan.yaml:2:15: unknown anchor"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var d doc
			err := Decode([]byte(c.in), "plan.yaml", &d)
			switch {
			case c.want == "" && err != nil:
				t.Fatalf("unexpected error %v", err)
			case c.want != "" && (err == nil || !strings.Contains(err.Error(), c.want)):
				t.Fatalf("error %v, want it to contain %q", err, c.want)
			}
			if c.want == "" && d.Channels["TV"].Current != 5 {
				t.Fatalf("channel names must keep their case: %+v", d.Channels)
			}
		})
	}
}

func FuzzDecode(f *testing.F) {
	f.Add([]byte("horizon_weeks: 13\nchannels:\n  a: {current: 1}\n"))
	f.Add([]byte("groups: [{name: x}]\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		var d doc
		_ = Decode(data, "f.yaml", &d) // must not panic
	})
}
