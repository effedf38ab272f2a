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
	"reflect"
	"regexp"
	"strings"
	"unicode/utf8"

	"go.yaml.in/yaml/v3"

	"sluice/internal/boundedio"
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
	data, err := boundedio.ReadFile(path, boundedio.MaxInput)
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
		return locate(convert(source, err), data)
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
		return locate(convert(source, err), data)
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

var anchorRE = regexp.MustCompile(`unknown anchor '([^']*)' referenced`)

// locate gives a line (and where it can, a column) to an error yaml.v3
// reported without one, so every YAML error names file:line. yaml.v3 leaves
// the line out when the problem is on the first line (its marks count from
// 0 and "line 0" is not printed: decode.go, parser.fail), and for problems
// its reader finds before scanning (control characters, bad UTF-8) and
// anchors it cannot resolve; those two are found here in the text.
func locate(err error, data []byte) error {
	var e *Error
	if !errors.As(err, &e) {
		return err
	}
	if strings.Contains(e.Msg, "tab character") {
		// yaml.v3 names the line where the enclosing block started; the
		// tab itself is the first one in a line's indentation.
		for i, ln := range strings.SplitAfter(string(data), "\n") {
			indent := ln[:len(ln)-len(strings.TrimLeft(ln, " \t"))]
			if j := strings.IndexByte(indent, '\t'); j >= 0 {
				e.Line, e.Column = i+1, j+1
				return e
			}
		}
	}
	if e.Line > 0 {
		return err
	}
	at := -1
	switch {
	case strings.Contains(e.Msg, "control characters"):
		at = bytes.IndexFunc(data, func(r rune) bool { return r < 0x20 && r != '\t' && r != '\n' && r != '\r' || r == 0x7f })
	case strings.Contains(e.Msg, "UTF-8"):
		at = bytes.IndexRune(data, utf8.RuneError)
		if at < 0 {
			for i := 0; i < len(data); {
				r, n := utf8.DecodeRune(data[i:])
				if r == utf8.RuneError && n <= 1 {
					at = i
					break
				}
				i += n
			}
		}
	default:
		if m := anchorRE.FindStringSubmatch(e.Msg); m != nil {
			at = bytes.Index(data, []byte("*"+m[1]))
		}
	}
	if at < 0 {
		e.Line = 1
		return e
	}
	e.Line = 1 + bytes.Count(data[:at], []byte("\n"))
	e.Column = 1 + at - (bytes.LastIndexByte(data[:at], '\n') + 1)
	return e
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
	case yaml.ScalarNode:
		// .nan and .inf decode into a float field without complaint, and
		// every later comparison with them is false: no input of sluice
		// means a non-finite number, so they are refused where written.
		if (t.Kind() == reflect.Float64 || t.Kind() == reflect.Float32) && node.Tag == "!!float" && isNonFinite(node.Value) {
			return &Error{File: source, Line: node.Line, Column: node.Column, Path: path,
				Msg: fmt.Sprintf("%s is not a finite number", node.Value)}
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

// isNonFinite reports whether a YAML 1.2 float scalar spells NaN or an
// infinity (.nan, .NaN, .NAN, .inf, -.Inf, +.INF, ...; YAML 1.2 section
// 10.2.1.4).
func isNonFinite(v string) bool {
	switch strings.ToLower(strings.TrimLeft(v, "+-")) {
	case ".nan", ".inf":
		return true
	}
	return false
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
