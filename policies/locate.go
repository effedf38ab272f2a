package policies

import (
	"cmp"
	"slices"

	"go.yaml.in/yaml/v3"
)

// locate returns the line and column of the key at path in the YAML data,
// or of its deepest ancestor that is present (a missing key is reported at
// its parent). It returns 0, 0 when nothing can be found.
func locate(data []byte, path []any) (line, col int) {
	var root yaml.Node
	if yaml.Unmarshal(data, &root) != nil || len(root.Content) == 0 {
		return 0, 0
	}
	n := root.Content[0]
	for _, seg := range path {
		switch seg := seg.(type) {
		case int:
			if n.Kind != yaml.SequenceNode || seg >= len(n.Content) {
				return line, col
			}
			n = n.Content[seg]
			line, col = n.Line, n.Column
		case string:
			if n.Kind != yaml.MappingNode {
				return line, col
			}
			found := false
			for i := 0; i+1 < len(n.Content); i += 2 {
				if n.Content[i].Value == seg {
					line, col = n.Content[i].Line, n.Content[i].Column
					n = n.Content[i+1]
					found = true
					break
				}
			}
			if !found {
				return line, col
			}
		}
	}
	return line, col
}

func sortedKeys[K cmp.Ordered, V any](m map[K]V) []K {
	keys := make([]K, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	return keys
}

func contains[T comparable](list []T, v T) bool { return slices.Contains(list, v) }

// pathAtLine returns the path and column of the first key written on line
// (1-based), for decoder errors that carry a line but no key path.
func pathAtLine(data []byte, line int) (path []any, col int, ok bool) {
	var root yaml.Node
	if yaml.Unmarshal(data, &root) != nil || len(root.Content) == 0 {
		return nil, 0, false
	}
	var walk func(n *yaml.Node, p []any) bool
	walk = func(n *yaml.Node, p []any) bool {
		switch n.Kind {
		case yaml.MappingNode:
			for i := 0; i+1 < len(n.Content); i += 2 {
				k := n.Content[i]
				kp := append(slices.Clip(p), k.Value)
				if k.Line == line {
					path, col, ok = kp, k.Column, true
					return true
				}
				if walk(n.Content[i+1], kp) {
					return true
				}
			}
		case yaml.SequenceNode:
			for i, c := range n.Content {
				if walk(c, append(slices.Clip(p), i)) {
					return true
				}
			}
		}
		return false
	}
	walk(root.Content[0], nil)
	return path, col, ok
}
