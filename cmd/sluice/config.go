package main

import (
	"bytes"
	"fmt"
	"os"
	"slices"
	"sort"
	"strings"

	"github.com/spf13/viper"
	"github.com/urfave/cli/v2"

	"sluice/internal/boundedio"
	"sluice/internal/strictyaml"
)

// configFile is the optional defaults file in the working directory.
const configFile = "sluice.yaml"

// opts reads a flag's value: the command line wins, then SLUICE_* from the
// environment, then sluice.yaml, then the flag's default.
type opts struct {
	c *cli.Context
	v *viper.Viper
}

func newOpts(c *cli.Context) (*opts, error) {
	v := viper.New()
	v.SetEnvPrefix("SLUICE")
	v.SetEnvKeyReplacer(strings.NewReplacer("-", "_"))
	v.AutomaticEnv()
	if _, err := os.Stat(configFile); err == nil {
		b, err := boundedio.ReadFile(configFile, boundedio.MaxInput)
		if err != nil {
			return nil, err
		}
		// Parsed once more here for the errors' sake: strictyaml names
		// sluice.yaml:line for any YAML error, viper does not.
		var probe map[string]any
		if len(bytes.TrimSpace(b)) > 0 {
			if err := strictyaml.Decode(b, configFile, &probe); err != nil {
				return nil, err
			}
		}
		v.SetConfigType("yaml")
		if err := v.ReadConfig(bytes.NewReader(b)); err != nil {
			return nil, fmt.Errorf("%s: %v", configFile, err)
		}
		if err := checkConfigKeys(v, c); err != nil {
			return nil, err
		}
	}
	return &opts{c: c, v: v}, nil
}

// checkConfigKeys refuses keys in sluice.yaml that no command knows, so a
// misspelt default is not silently ignored.
func checkConfigKeys(v *viper.Viper, c *cli.Context) error {
	known := map[string]bool{}
	for _, cmd := range c.App.Commands {
		for _, f := range cmd.Flags {
			for _, n := range f.Names() {
				known[n] = true
			}
		}
	}
	var unknown []string
	for _, k := range v.AllKeys() {
		if !known[k] && !known[strings.ReplaceAll(k, "_", "-")] {
			unknown = append(unknown, k)
		}
	}
	sort.Strings(unknown)
	if len(unknown) > 0 {
		return fmt.Errorf("%s: unknown key %q (keys are flag names, e.g. kpi, channels, value-per-kpi)", configFile, unknown[0])
	}
	return nil
}

func (o *opts) fromConfig(name string) bool {
	return !o.c.IsSet(name) && o.v.IsSet(name)
}

// isSet reports whether the flag was given on the command line, in the
// environment or in sluice.yaml (rather than left at its default).
func (o *opts) isSet(name string) bool {
	return o.c.IsSet(name) || o.v.IsSet(name)
}

func (o *opts) String(name string) string {
	if o.fromConfig(name) {
		return o.v.GetString(name)
	}
	return o.c.String(name)
}

func (o *opts) Int(name string) int {
	if o.fromConfig(name) {
		return o.v.GetInt(name)
	}
	return o.c.Int(name)
}

func (o *opts) Uint64(name string) uint64 {
	if o.fromConfig(name) {
		return o.v.GetUint64(name)
	}
	return o.c.Uint64(name)
}

func (o *opts) Float(name string) float64 {
	if o.fromConfig(name) {
		return o.v.GetFloat64(name)
	}
	return o.c.Float64(name)
}

func (o *opts) Bool(name string) bool {
	if o.fromConfig(name) {
		return o.v.GetBool(name)
	}
	return o.c.Bool(name)
}

// List reads a comma-separated list flag (or a YAML list in sluice.yaml).
func (o *opts) List(name string) []string {
	var raw []string
	if o.fromConfig(name) {
		raw = o.v.GetStringSlice(name)
	} else {
		raw = []string{o.c.String(name)}
	}
	var out []string
	for _, r := range raw {
		for _, p := range strings.Split(r, ",") {
			if p = strings.TrimSpace(p); p != "" && !slices.Contains(out, p) {
				out = append(out, p)
			}
		}
	}
	return out
}
