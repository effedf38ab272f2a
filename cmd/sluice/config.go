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
)

// configFile is the optional defaults file in the working directory.
const configFile = "sluice.yaml"

// opts reads a flag's value: the command line wins, then SLUICE_* from the
// environment, then sluice.yaml, then the flag's default.
type opts struct {
	c *cli.Context
	v *viper.Viper
}

// commandLineOnly are dangerous switches: taken from the command line
// only, never from sluice.yaml or the environment, where they could be on
// without the person running sluice seeing it. Either place naming one is
// refused, not ignored.
var commandLineOnly = []string{"replace-signed"}

func newOpts(c *cli.Context) (*opts, error) {
	for _, n := range commandLineOnly {
		env := "SLUICE_" + strings.ToUpper(strings.ReplaceAll(n, "-", "_"))
		if os.Getenv(env) != "" {
			return nil, hinted{err: fmt.Errorf("%s is set, but --%s is taken from the command line only", env, n),
				hint: fmt.Sprintf("unset %s and pass --%s on the command line if you mean it", env, n)}
		}
	}
	v := viper.New()
	v.SetEnvPrefix("SLUICE")
	v.SetEnvKeyReplacer(strings.NewReplacer("-", "_"))
	v.AutomaticEnv()
	if _, err := os.Stat(configFile); err == nil {
		data, err := os.ReadFile(configFile)
		if err != nil {
			return nil, err
		}
		if err := readConfig(v, data, c.App.Commands); err != nil {
			return nil, err
		}
	}
	return &opts{c: c, v: v}, nil
}

// maxConfigSize bounds sluice.yaml: a defaults file is a few lines.
const maxConfigSize = 1 << 20

// readConfig reads the contents of sluice.yaml into v and refuses keys
// that no command knows and keys of command-line-only switches.
func readConfig(v *viper.Viper, data []byte, commands []*cli.Command) error {
	if len(data) > maxConfigSize {
		return fmt.Errorf("%s: larger than %d bytes, not a defaults file", configFile, maxConfigSize)
	}
	v.SetConfigType("yaml")
	if err := v.ReadConfig(bytes.NewReader(data)); err != nil {
		return fmt.Errorf("%s: %v", configFile, err)
	}
	return checkConfigKeys(v, commands)
}

// checkConfigKeys refuses keys in sluice.yaml that no command knows, so a
// misspelt default is not silently ignored.
func checkConfigKeys(v *viper.Viper, commands []*cli.Command) error {
	known := map[string]bool{}
	for _, cmd := range commands {
		for _, f := range cmd.Flags {
			for _, n := range f.Names() {
				known[n] = true
			}
		}
	}
	var unknown []string
	for _, k := range v.AllKeys() {
		if slices.Contains(commandLineOnly, k) || slices.Contains(commandLineOnly, strings.ReplaceAll(k, "_", "-")) {
			return hinted{err: fmt.Errorf("%s: key %q is refused: --%s is taken from the command line only", configFile, k, strings.ReplaceAll(k, "_", "-")),
				hint: fmt.Sprintf("remove %s from %s and pass --%s on the command line if you mean it", k, configFile, strings.ReplaceAll(k, "_", "-"))}
		}
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
