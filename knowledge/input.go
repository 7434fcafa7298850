package knowledge

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"reflect"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"

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
	reUnmarshal = regexp.MustCompile("cannot unmarshal !!(\\w+)(?: `([^`]*)`)? into (\\S+)")
	reSyntax    = regexp.MustCompile(`^yaml: line (\d+): (.*)$`)
)

// Decode reads data strictly into v: unknown keys, duplicate keys, wrong
// types and syntax errors are returned as InputErrors naming file and line.
// The text is first parsed into nodes, which catches syntax errors, a
// second document (it would otherwise be ignored) and keys that are lists
// or mappings (they make the decoder fail without a position); only then is
// it decoded strictly into v. A panic inside the YAML parser (hostile
// input) is turned into an error as well.
func Decode(file string, data []byte, v any) (doc *Doc, err error) {
	defer func() {
		if r := recover(); r != nil {
			doc = nil
			err = &InputError{File: file, Line: firstContentLine(data), Msg: fmt.Sprintf("unreadable YAML (%v)", r)}
		}
	}()
	dec := yaml.NewDecoder(bytes.NewReader(data))
	var root yaml.Node
	if err := dec.Decode(&root); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, &InputError{File: file, Msg: "the file is empty"}
		}
		return nil, yamlError(file, data, nil, err)
	}
	var extra yaml.Node
	switch err := dec.Decode(&extra); {
	case err == nil:
		return nil, &InputError{File: file, Line: extra.Line, Msg: "a second YAML document starts here; the file must hold one document"}
	case !errors.Is(err, io.EOF):
		return nil, yamlError(file, data, &root, err)
	}
	doc = &Doc{File: file}
	if root.Kind == yaml.DocumentNode && len(root.Content) > 0 {
		doc.Root = root.Content[0]
	}
	if doc.Root == nil || doc.Root.Kind != yaml.MappingNode {
		line := firstContentLine(data)
		if doc.Root != nil && doc.Root.Line > 0 {
			line = doc.Root.Line
		}
		return nil, &InputError{File: file, Line: line, Msg: "expected a mapping of keys at the top level"}
	}
	if e := checkKeys(file, doc.Root); e != nil {
		return nil, e
	}
	strict := yaml.NewDecoder(bytes.NewReader(data))
	strict.KnownFields(true)
	if err := strict.Decode(v); err != nil {
		err = yamlError(file, data, &root, err)
		var es InputErrors
		if errors.As(err, &es) {
			for _, e := range es {
				placeKey(e, doc.Root, reflect.TypeOf(v))
			}
		}
		return nil, err
	}
	return doc, nil
}

var (
	reUnknownKey   = regexp.MustCompile(`^unknown key "(.*)"$`)
	reDuplicateKey = regexp.MustCompile(`^mapping key "(.*)" already defined at line (\d+)$`)
	reGot          = regexp.MustCompile(`^expected .*, got ("(?:[^"\\]|\\.)*")$`)
)

// placeKey gives an unknown or duplicate key error, or a value of the
// wrong type, its field path (as in "transfers[2].rat"); for an unknown key
// it says which keys are allowed there (read from the struct tags of t, the
// type decoded into).
func placeKey(e *InputError, root *yaml.Node, t reflect.Type) {
	var name string
	var first int
	if m := reGot.FindStringSubmatch(e.Msg); m != nil && e.Field == "" {
		if got, err := strconv.Unquote(m[1]); err == nil {
			if path, ok := valuePath(root, got, e.Line, nil); ok {
				e.Field = fieldName(path)
			}
		}
		return
	}
	if m := reUnknownKey.FindStringSubmatch(e.Msg); m != nil {
		name = m[1]
	} else if m := reDuplicateKey.FindStringSubmatch(e.Msg); m != nil {
		name = m[1]
		first, _ = strconv.Atoi(m[2])
	} else {
		return
	}
	path, ok := keyPath(root, name, e.Line, nil)
	if !ok {
		return
	}
	e.Field = fieldName(append(path, name))
	if first > 0 {
		e.Msg = fmt.Sprintf("the key appears twice in one mapping (first at line %d)", first)
		return
	}
	e.Msg = "unknown key"
	if keys := yamlKeys(t, path); len(keys) > 0 {
		e.Msg += " (keys here: " + strings.Join(keys, ", ") + ")"
	}
}

// valuePath finds the scalar value written on line as text and returns its
// path (string keys and int list indices).
func valuePath(n *yaml.Node, text string, line int, path []any) ([]any, bool) {
	switch n.Kind {
	case yaml.ScalarNode:
		return path, n.Value == text && n.Line == line && len(path) > 0
	case yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			if p, ok := valuePath(n.Content[i+1], text, line, append(path[:len(path):len(path)], n.Content[i].Value)); ok {
				return p, true
			}
		}
	case yaml.SequenceNode:
		for i, c := range n.Content {
			if p, ok := valuePath(c, text, line, append(path[:len(path):len(path)], i)); ok {
				return p, true
			}
		}
	}
	return nil, false
}

// keyPath finds the mapping key called name written on line and returns the
// path (string keys and int list indices) of the mapping that holds it.
func keyPath(n *yaml.Node, name string, line int, path []any) ([]any, bool) {
	switch n.Kind {
	case yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			k := n.Content[i]
			if k.Value == name && k.Line == line {
				return path, true
			}
			if p, ok := keyPath(n.Content[i+1], name, line, append(path[:len(path):len(path)], k.Value)); ok {
				return p, true
			}
		}
	case yaml.SequenceNode:
		for i, c := range n.Content {
			if p, ok := keyPath(c, name, line, append(path[:len(path):len(path)], i)); ok {
				return p, true
			}
		}
	}
	return nil, false
}

// fieldName writes a path as a field name: keys joined by dots, list
// indices in brackets.
func fieldName(path []any) string {
	var b strings.Builder
	for _, p := range path {
		switch p := p.(type) {
		case int:
			fmt.Fprintf(&b, "[%d]", p)
		default:
			if b.Len() > 0 {
				b.WriteByte('.')
			}
			fmt.Fprint(&b, p)
		}
	}
	return b.String()
}

// yamlKeys returns the keys a struct accepts at path below type t, in
// declaration order, or nil when path does not lead to a struct.
func yamlKeys(t reflect.Type, path []any) []string {
	for _, p := range path {
		t = deref(t)
		switch t.Kind() {
		case reflect.Struct:
			name, _ := p.(string)
			f, ok := yamlField(t, name)
			if !ok {
				return nil
			}
			t = f.Type
		case reflect.Map, reflect.Slice, reflect.Array:
			t = t.Elem()
		default:
			return nil
		}
	}
	t = deref(t)
	if t.Kind() != reflect.Struct {
		return nil
	}
	var keys []string
	for i := range t.NumField() {
		f := t.Field(i)
		name, opts, _ := strings.Cut(f.Tag.Get("yaml"), ",")
		switch {
		case strings.Contains(opts, "inline"):
			keys = append(keys, yamlKeys(f.Type, nil)...)
		case name == "-" || !f.IsExported():
		case name == "":
			keys = append(keys, strings.ToLower(f.Name))
		default:
			keys = append(keys, name)
		}
	}
	return keys
}

// yamlField finds the struct field (possibly in an inline struct) that
// holds key name.
func yamlField(t reflect.Type, name string) (reflect.StructField, bool) {
	for i := range t.NumField() {
		f := t.Field(i)
		key, opts, _ := strings.Cut(f.Tag.Get("yaml"), ",")
		if strings.Contains(opts, "inline") {
			if g, ok := yamlField(deref(f.Type), name); ok {
				return g, true
			}
			continue
		}
		if key == "" {
			key = strings.ToLower(f.Name)
		}
		if key == name && f.IsExported() {
			return f, true
		}
	}
	return reflect.StructField{}, false
}

func deref(t reflect.Type) reflect.Type {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	return t
}

// checkKeys refuses mapping keys that are not plain values (a list or a
// mapping as a key, written with "?") and merge keys (<<) whose value is not
// a mapping or a list of mappings: the YAML decoder fails on both without
// saying where.
func checkKeys(file string, n *yaml.Node) *InputError {
	target := func(n *yaml.Node) *yaml.Node {
		if n.Kind == yaml.AliasNode && n.Alias != nil {
			return n.Alias
		}
		return n
	}
	if n.Kind == yaml.MappingNode {
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, v := n.Content[i], target(n.Content[i+1])
			if target(k).Kind != yaml.ScalarNode {
				return &InputError{File: file, Line: k.Line, Msg: "a key must be a plain name, not a list or a mapping"}
			}
			if k.Tag != "!!merge" {
				continue
			}
			ok := v.Kind == yaml.MappingNode
			if v.Kind == yaml.SequenceNode {
				ok = true
				for _, item := range v.Content {
					ok = ok && target(item).Kind == yaml.MappingNode
				}
			}
			if !ok {
				return &InputError{File: file, Line: k.Line, Msg: "the merge key << needs a mapping or a list of mappings"}
			}
		}
	}
	for _, c := range n.Content {
		if e := checkKeys(file, c); e != nil {
			return e
		}
	}
	return nil
}

// yamlError turns the yaml package's messages into positioned, readable
// errors. The package numbers lines from 1 for scanner errors but from 0
// for parser errors ("did not find expected …", checked against
// go.yaml.in/yaml/v3 v3.0.6), omits the line when it is the first one, and
// gives no line for encoding errors or for alias problems; those positions
// are recovered here from the text or the parsed nodes (root, when the text
// parsed).
func yamlError(file string, data []byte, root *yaml.Node, err error) error {
	var te *yaml.TypeError
	if errors.As(err, &te) {
		var out InputErrors
		for _, s := range te.Errors {
			e := &InputError{File: file, Line: firstContentLine(data), Msg: s}
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
		if slices.Contains(parserProblems, m[2]) {
			line++ // a parser error: the package counts from 0
		}
		msg := "YAML syntax: " + m[2]
		if indentedByTab(data, line) {
			msg = "YAML syntax: a tab character indents this line; indent YAML with spaces only"
		}
		return &InputError{File: file, Line: line, Msg: msg}
	}
	msg := strings.TrimPrefix(s, "yaml: ")
	line := firstContentLine(data)
	switch {
	case reEncoding.MatchString(msg):
		var what string
		line, what = badCharacter(data)
		return &InputError{File: file, Line: line, Msg: "YAML text must be UTF-8 without control characters; found " + what}
	case reAnchor.MatchString(msg):
		m := reAnchor.FindStringSubmatch(msg)
		mark, what := "*", fmt.Sprintf("the alias *%s names no anchor &%s defined before it", m[1], m[1])
		if m[2] == "value contains itself" {
			mark, what = "&", fmt.Sprintf("the value of anchor &%s contains an alias to itself", m[1])
		}
		if i := bytes.Index(data, []byte(mark+m[1])); i >= 0 {
			line = 1 + bytes.Count(data[:i], []byte("\n"))
		}
		return &InputError{File: file, Line: line, Msg: "YAML: " + what}
	case strings.Contains(msg, "excessive aliasing") && root != nil:
		if a := firstAlias(root); a != nil {
			line = a.Line
		}
		return &InputError{File: file, Line: line, Msg: "the aliases (*name) expand to too large a document"}
	}
	if root == nil {
		msg = "YAML syntax: " + msg // the text did not parse
	} else {
		msg = "YAML: " + msg
	}
	return &InputError{File: file, Line: line, Msg: msg}
}

// parserProblems are the messages of the YAML parser (parserc.go of
// go.yaml.in/yaml/v3 v3.0.6), whose lines are counted from 0; the scanner's
// messages, some of which also begin "did not find expected", count from 1.
var parserProblems = []string{
	"did not find expected ',' or ']'",
	"did not find expected ',' or '}'",
	"did not find expected '-' indicator",
	"did not find expected <document start>",
	"did not find expected <stream-start>",
	"did not find expected key",
	"did not find expected node content",
	"found duplicate %TAG directive",
	"found duplicate %YAML directive",
	"found incompatible YAML document",
	"found undefined tag handle",
}

var (
	reEncoding = regexp.MustCompile(`UTF-8|UTF-16|control characters|Unicode character|input error`)
	reAnchor   = regexp.MustCompile(`^(?:unknown )?anchor '(.*)' (referenced|value contains itself)$`)
)

// badCharacter returns the 1-based line of the first byte that is not
// UTF-8 or is a character YAML 1.2 does not allow in a stream (§5.1: tab,
// line feed, carriage return, printable ASCII, NEL and the printable
// ranges above), and a description of it.
func badCharacter(data []byte) (line int, what string) {
	line = 1
	for i := 0; i < len(data); {
		r, size := utf8.DecodeRune(data[i:])
		switch {
		case r == utf8.RuneError && size <= 1:
			return line, fmt.Sprintf("byte 0x%02X, which is not UTF-8", data[i])
		case !(r == 0x09 || r == 0x0A || r == 0x0D || (r >= 0x20 && r <= 0x7E) || r == 0x85 ||
			(r >= 0xA0 && r <= 0xD7FF) || (r >= 0xE000 && r <= 0xFFFD) || r >= 0x10000):
			return line, fmt.Sprintf("character %U", r)
		case r == '\n':
			line++
		}
		i += size
	}
	return firstContentLine(data), "an unreadable character"
}

// indentedByTab reports whether the 1-based line of data starts with white
// space that holds a tab.
func indentedByTab(data []byte, line int) bool {
	lines := strings.Split(string(data), "\n")
	if line < 1 || line > len(lines) {
		return false
	}
	l := lines[line-1]
	indent := l[:len(l)-len(strings.TrimLeft(l, " \t"))]
	return strings.Contains(indent, "\t")
}

// firstContentLine is the 1-based line of the first character that is
// neither white space nor in a comment; 1 for blank text.
func firstContentLine(data []byte) int {
	for i, l := range strings.Split(string(data), "\n") {
		l = strings.TrimSpace(strings.TrimPrefix(l, "\ufeff"))
		if l != "" && !strings.HasPrefix(l, "#") {
			return i + 1
		}
	}
	return 1
}

// firstAlias returns the first alias node (*name) under n, in file order.
func firstAlias(n *yaml.Node) *yaml.Node {
	if n.Kind == yaml.AliasNode {
		return n
	}
	for _, c := range n.Content {
		if a := firstAlias(c); a != nil {
			return a
		}
	}
	return nil
}

func readable(msg string) string {
	if m := reUnknown.FindStringSubmatch(msg); m != nil {
		return fmt.Sprintf("unknown key %q", m[1])
	}
	if m := reUnmarshal.FindStringSubmatch(msg); m != nil {
		want := m[3]
		switch {
		case strings.HasPrefix(want, "[]"):
			want = "a list"
		case strings.HasPrefix(want, "map"), strings.Contains(want, "."):
			want = "a mapping of keys"
		case strings.Contains(want, "float"), strings.Contains(want, "int"):
			want = "a number"
		case want == "string":
			want = "a text value"
		case want == "bool":
			want = "true or false"
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

// Flatten collects every *InputError in err's tree (InputErrors, joined or
// wrapped errors), in order.
func Flatten(err error) []*InputError {
	var out []*InputError
	var walk func(error)
	walk = func(err error) {
		var ie *InputError
		switch x := err.(type) {
		case nil:
		case interface{ Unwrap() []error }:
			for _, e := range x.Unwrap() {
				walk(e)
			}
		default:
			if errors.As(err, &ie) {
				out = append(out, ie)
			}
		}
	}
	walk(err)
	return out
}

// Recover, deferred at the boundary of a parser, turns a panic while
// reading file into an InputError: bad input must never crash nlens, and
// the user should learn which file to send with the report.
func Recover(file, what string, err *error) {
	if r := recover(); r != nil {
		*err = &InputError{File: file, Line: 1, Msg: fmt.Sprintf("nlens could not read this %s (internal error: %v); please report it with the file", what, r)}
	}
}
