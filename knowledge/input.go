package knowledge

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"regexp"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"
)

// InputError is a problem in an input file (a knowledge file, a site file, a
// study file or a samples CSV), positioned like encoding/csv.ParseError: Line
// is 1-based and 0 when the position is unknown; Field names the offending
// key as a path such as "transfers[2].rate".
type InputError struct {
	File  string
	Line  int
	Field string
	Msg   string
}

func (e *InputError) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		b.WriteString(":")
		b.WriteString(strconv.Itoa(e.Line))
	}
	b.WriteString(": ")
	if e.Field != "" {
		b.WriteString(e.Field)
		b.WriteString(": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

// InputErrors is a list of input problems reported together, in file order.
type InputErrors []*InputError

func (es InputErrors) Error() string {
	parts := make([]string, len(es))
	for i, e := range es {
		parts[i] = e.Error()
	}
	return strings.Join(parts, "\n")
}

// Unwrap lets errors.As find the first *InputError.
func (es InputErrors) Unwrap() []error {
	out := make([]error, len(es))
	for i, e := range es {
		out[i] = e
	}
	return out
}

// Err returns nil for an empty list and the list otherwise.
func (es InputErrors) Err() error {
	if len(es) == 0 {
		return nil
	}
	return es
}

// Doc is a decoded YAML document that still knows where each value was
// written, so validation can report lines.
type Doc struct {
	File string
	Root *yaml.Node // the top-level mapping (nil for an empty document)
}

var (
	reLine      = regexp.MustCompile(`^line (\d+): (.*)$`)
	reUnknown   = regexp.MustCompile(`field (\S+) not found in type \S+`)
	reUnmarshal = regexp.MustCompile("cannot unmarshal !!(\\w+) `([^`]*)` into (\\S+)")
	reSyntax    = regexp.MustCompile(`^yaml: line (\d+): (.*)$`)
)

// Decode reads data strictly into v: unknown keys, duplicate keys, wrong
// types and syntax errors are returned as InputErrors naming file and line.
// A panic inside the YAML parser (hostile input) is turned into an error.
func Decode(file string, data []byte, v any) (doc *Doc, err error) {
	defer func() {
		if r := recover(); r != nil {
			doc = nil
			err = &InputError{File: file, Msg: fmt.Sprintf("unreadable YAML (%v)", r)}
		}
	}()
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	if err := dec.Decode(v); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, &InputError{File: file, Msg: "the file is empty"}
		}
		return nil, yamlError(file, err)
	}
	var root yaml.Node
	if err := yaml.Unmarshal(data, &root); err != nil {
		return nil, yamlError(file, err)
	}
	doc = &Doc{File: file}
	if root.Kind == yaml.DocumentNode && len(root.Content) > 0 {
		doc.Root = root.Content[0]
	}
	if doc.Root == nil || doc.Root.Kind != yaml.MappingNode {
		return nil, &InputError{File: file, Line: 1, Msg: "expected a mapping of keys at the top level"}
	}
	return doc, nil
}

// yamlError turns the yaml package's messages into positioned, readable errors.
func yamlError(file string, err error) error {
	var te *yaml.TypeError
	if errors.As(err, &te) {
		var out InputErrors
		for _, s := range te.Errors {
			e := &InputError{File: file, Msg: s}
			if m := reLine.FindStringSubmatch(s); m != nil {
				e.Line, _ = strconv.Atoi(m[1])
				e.Msg = m[2]
			}
			e.Msg = readable(e.Msg)
			out = append(out, e)
		}
		return out
	}
	s := err.Error()
	if m := reSyntax.FindStringSubmatch(s); m != nil {
		line, _ := strconv.Atoi(m[1])
		return &InputError{File: file, Line: line, Msg: "YAML syntax: " + m[2]}
	}
	return &InputError{File: file, Msg: strings.TrimPrefix(s, "yaml: ")}
}

func readable(msg string) string {
	if m := reUnknown.FindStringSubmatch(msg); m != nil {
		return fmt.Sprintf("unknown key %q", m[1])
	}
	if m := reUnmarshal.FindStringSubmatch(msg); m != nil {
		want := m[3]
		switch {
		case strings.Contains(want, "float"), strings.Contains(want, "int"):
			want = "a number"
		case want == "string":
			want = "a text value"
		case want == "bool":
			want = "true or false"
		case strings.HasPrefix(want, "[]"):
			want = "a list"
		case strings.HasPrefix(want, "map"), strings.Contains(want, "."):
			want = "a mapping of keys"
		}
		got := m[2]
		if got == "" {
			got = "a " + yamlKind(m[1])
		} else {
			got = strconv.Quote(got)
		}
		return fmt.Sprintf("expected %s, got %s", want, got)
	}
	return msg
}

func yamlKind(tag string) string {
	switch tag {
	case "seq":
		return "list"
	case "map":
		return "mapping"
	}
	return "value"
}

// Line returns the line of the value found by following path (string keys
// and int list indices) from the top-level mapping; when the full path does
// not exist it returns the line of the deepest node reached.
func (d *Doc) Line(path ...any) int {
	_, line := d.find(path)
	return line
}

// Has reports whether the key path exists in the document (for telling an
// omitted key from an explicit zero).
func (d *Doc) Has(path ...any) bool {
	n, _ := d.find(path)
	return n != nil
}

// find follows path and returns the node (nil if absent) and the line of the
// deepest node reached.
func (d *Doc) find(path []any) (*yaml.Node, int) {
	if d == nil || d.Root == nil {
		return nil, 0
	}
	n := d.Root
	for _, p := range path {
		var next *yaml.Node
		switch key := p.(type) {
		case string:
			if n.Kind == yaml.MappingNode {
				for i := 0; i+1 < len(n.Content); i += 2 {
					if n.Content[i].Value == key {
						next = n.Content[i+1]
						break
					}
				}
			}
		case int:
			if n.Kind == yaml.SequenceNode && key >= 0 && key < len(n.Content) {
				next = n.Content[key]
			}
		}
		if next == nil {
			return nil, n.Line
		}
		n = next
	}
	return n, n.Line
}

// Errorf builds an InputError positioned at path in the document; field is
// the user-facing name of the path.
func (d *Doc) Errorf(field string, path []any, format string, args ...any) *InputError {
	file := ""
	if d != nil {
		file = d.File
	}
	return &InputError{File: file, Line: d.Line(path...), Field: field, Msg: fmt.Sprintf(format, args...)}
}
