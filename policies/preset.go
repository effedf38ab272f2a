package policies

import (
	"embed"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path"
	"slices"
	"strings"
)

//go:embed presets/*.yaml
var presetFS embed.FS

// Names returns the names of the built-in presets, sorted.
func Names() []string {
	entries, err := fs.ReadDir(presetFS, "presets")
	if err != nil {
		panic("policies: presets not embedded: " + err.Error())
	}
	var names []string
	for _, e := range entries {
		names = append(names, strings.TrimSuffix(e.Name(), ".yaml"))
	}
	slices.Sort(names)
	return names
}

// Preset returns the built-in policy called name, with Source "preset:NAME".
func Preset(name string) (*Policy, error) {
	if !slices.Contains(Names(), name) {
		return nil, fmt.Errorf("policies: no preset %q (presets: %s)", name, strings.Join(Names(), ", "))
	}
	data, err := presetFS.ReadFile(path.Join("presets", name+".yaml"))
	if err != nil {
		return nil, err
	}
	p, err := Parse(data, "preset:"+name)
	if err != nil {
		return nil, err
	}
	return p, nil
}

// Resolve returns the preset called nameOrPath if there is one and no file of
// that name exists, else the policy file at nameOrPath. A name that is
// neither is refused with the list of presets.
func Resolve(nameOrPath string) (*Policy, error) {
	_, statErr := os.Stat(nameOrPath)
	if slices.Contains(Names(), nameOrPath) && statErr != nil {
		return Preset(nameOrPath)
	}
	if errors.Is(statErr, fs.ErrNotExist) && !strings.ContainsAny(nameOrPath, `/\.`) {
		return nil, fmt.Errorf("policies: %q is neither a preset (%s) nor a policy file", nameOrPath, strings.Join(Names(), ", "))
	}
	return Load(nameOrPath)
}
