// Package strictyaml decodes the YAML files people write by hand (plans,
// policies, model specs, simulation truths) strictly: an unknown key or a
// value of the wrong type is refused with the file, line, column and the
// key's dotted path, so a typo never silently falls back to a default.
//
// It decodes with go.yaml.in/yaml/v3 directly rather than through viper:
// viper lower-cases map keys (channel names are map keys here) and loses
// line numbers.
package strictyaml

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"reflect"
	"regexp"
	"strings"

	"go.yaml.in/yaml/v3"
)

// Error is a problem at a position of a YAML file.
type Error struct {
	File         string
	Line, Column int    // 1-based; 0 when unknown
	Path         string // dotted key path, "" when unknown
	Msg          string
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
		if e.Column > 0 {
			fmt.Fprintf(&b, ":%d", e.Column)
		}
	}
	b.WriteString(": ")
	if e.Path != "" {
		fmt.Fprintf(&b, "%s: ", e.Path)
	}
	b.WriteString(e.Msg)
	return b.String()
}

// ReadFile decodes the YAML file at path into dst (a pointer to a struct).
func ReadFile(path string, dst any) error {
	data, err := os.ReadFile(path)
	if err != nil {
		return err
	}
	return Decode(data, path, dst)
}

// Decode decodes data (named source in messages) into dst, refusing unknown
// keys, duplicate keys and wrongly typed values.
func Decode(data []byte, source string, dst any) error {
	var root yaml.Node
	if err := yaml.Unmarshal(data, &root); err != nil {
		return convert(source, err)
	}
	if root.Kind == 0 {
		return &Error{File: source, Msg: "file is empty"}
	}
	if err := walk(source, &root, reflect.TypeOf(dst), ""); err != nil {
		return err
	}
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	if err := dec.Decode(dst); err != nil && !errors.Is(err, io.EOF) {
		return convert(source, err)
	}
	return nil
}

var lineRE = regexp.MustCompile(`line (\d+): (.*)`)

// convert rewrites yaml.v3's "yaml: line 3: ..." messages into file:line form.
func convert(source string, err error) error {
	msg := err.Error()
	var te *yaml.TypeError
	if errors.As(err, &te) && len(te.Errors) > 0 {
		msg = te.Errors[0]
	}
	msg = strings.TrimPrefix(msg, "yaml: ")
	if m := lineRE.FindStringSubmatch(msg); m != nil {
		var line int
		fmt.Sscan(m[1], &line)
		return &Error{File: source, Line: line, Msg: m[2]}
	}
	return &Error{File: source, Msg: msg}
}

// walk checks node against type t, reporting the first unknown key with its
// path and position.
func walk(source string, node *yaml.Node, t reflect.Type, path string) error {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	switch node.Kind {
	case yaml.DocumentNode:
		for _, c := range node.Content {
			if err := walk(source, c, t, path); err != nil {
				return err
			}
		}
	case yaml.MappingNode:
		seen := map[string]bool{}
		for i := 0; i+1 < len(node.Content); i += 2 {
			k, v := node.Content[i], node.Content[i+1]
			p := join(path, k.Value)
			if seen[k.Value] {
				return &Error{File: source, Line: k.Line, Column: k.Column, Path: p, Msg: "key given twice"}
			}
			seen[k.Value] = true
			switch t.Kind() {
			case reflect.Struct:
				ft, ok := fieldType(t, k.Value)
				if !ok {
					return &Error{File: source, Line: k.Line, Column: k.Column, Path: p,
						Msg: fmt.Sprintf("unknown key %q (known: %s)", k.Value, strings.Join(knownKeys(t), ", "))}
				}
				if err := walk(source, v, ft, p); err != nil {
					return err
				}
			case reflect.Map:
				if err := walk(source, v, t.Elem(), p); err != nil {
					return err
				}
			}
		}
	case yaml.SequenceNode:
		if t.Kind() == reflect.Slice || t.Kind() == reflect.Array {
			for i, c := range node.Content {
				if err := walk(source, c, t.Elem(), fmt.Sprintf("%s[%d]", path, i)); err != nil {
					return err
				}
			}
		}
	}
	return nil
}

func join(path, key string) string {
	if path == "" {
		return key
	}
	return path + "." + key
}

func fieldType(t reflect.Type, key string) (reflect.Type, bool) {
	for i := range t.NumField() {
		f := t.Field(i)
		name, opts, _ := strings.Cut(f.Tag.Get("yaml"), ",")
		if name == "-" || !f.IsExported() {
			continue
		}
		if strings.Contains(opts, "inline") {
			if ft, ok := fieldType(f.Type, key); ok {
				return ft, true
			}
			continue
		}
		if name == "" {
			name = strings.ToLower(f.Name)
		}
		if name == key {
			return f.Type, true
		}
	}
	return nil, false
}

func knownKeys(t reflect.Type) []string {
	var keys []string
	for i := range t.NumField() {
		f := t.Field(i)
		name, opts, _ := strings.Cut(f.Tag.Get("yaml"), ",")
		if name == "-" || !f.IsExported() {
			continue
		}
		if strings.Contains(opts, "inline") {
			keys = append(keys, knownKeys(f.Type)...)
			continue
		}
		if name == "" {
			name = strings.ToLower(f.Name)
		}
		keys = append(keys, name)
	}
	return keys
}
