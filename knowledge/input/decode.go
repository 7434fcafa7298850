package input

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
// types and syntax errors are returned as Errors naming file and line.
// The text is first parsed into nodes, which catches syntax errors, a
// second document (it would otherwise be ignored) and keys that are lists
// or mappings (they make the decoder fail without a position); only then is
// it decoded strictly into v. A panic inside the YAML parser (hostile
// input) is turned into an error as well.
func Decode(file string, data []byte, v any) (doc *Doc, err error) {
	defer func() {
		if r := recover(); r != nil {
			doc = nil
			err = &Error{File: file, Line: firstContentLine(data), Msg: fmt.Sprintf("unreadable YAML (%v)", r)}
		}
	}()
	dec := yaml.NewDecoder(bytes.NewReader(data))
	var root yaml.Node
	if err := dec.Decode(&root); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, &Error{File: file, Msg: "the file is empty"}
		}
		return nil, yamlError(file, data, nil, err)
	}
	var extra yaml.Node
	switch err := dec.Decode(&extra); {
	case err == nil:
		return nil, &Error{File: file, Line: extra.Line, Msg: "a second YAML document starts here; the file must hold one document"}
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
		return nil, &Error{File: file, Line: line, Msg: "expected a mapping of keys at the top level"}
	}
	if e := checkKeys(file, doc.Root); e != nil {
		return nil, e
	}
	if e := checkTags(file, doc.Root, nil); e != nil {
		return nil, e
	}
	strict := yaml.NewDecoder(bytes.NewReader(data))
	strict.KnownFields(true)
	if err := strict.Decode(v); err != nil {
		err = yamlError(file, data, &root, err)
		var es Errors
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
	reGotKind      = regexp.MustCompile(`^expected .*, got a (list|mapping)$`)
)

// placeKey gives an unknown or duplicate key error, or a value of the
// wrong type, its field path (as in "transfers[2].rat") and column; for an
// unknown key it says which keys are allowed there (read from the struct
// tags of t, the type decoded into).
func placeKey(e *Error, root *yaml.Node, t reflect.Type) {
	if e.Field != "" {
		return
	}
	if match, short := wrongValue(e.Msg); match != nil {
		if path, n, ok := nodePath(root, e.Line, match, nil); ok {
			e.Field, e.Column = fieldName(path), n.Column
			switch {
			case short && (n.Tag == "!!int" || n.Tag == "!!float"):
				e.Msg = fmt.Sprintf("the number %s is too large for this field", n.Value)
			case short:
				e.Msg = fmt.Sprintf("%s, got %q", strings.SplitN(e.Msg, ", got ", 2)[0], n.Value)
			}
		}
		return
	}
	var name string
	var first int
	if m := reUnknownKey.FindStringSubmatch(e.Msg); m != nil {
		name = m[1]
	} else if m := reDuplicateKey.FindStringSubmatch(e.Msg); m != nil {
		name = m[1]
		first, _ = strconv.Atoi(m[2])
	} else {
		return
	}
	path, key, ok := keyPath(root, name, e.Line, nil)
	if !ok {
		return
	}
	e.Field, e.Column = fieldName(append(path, name)), key.Column
	if first > 0 {
		e.Msg = fmt.Sprintf("the key appears twice in one mapping (first at line %d)", first)
		return
	}
	e.Msg = "unknown key"
	if keys := yamlKeys(t, path); len(keys) > 0 {
		e.Msg += " (keys here: " + strings.Join(keys, ", ") + ")"
	}
}

// wrongValue returns a test for the node a readable type error ("expected
// a number, got \"four\"", "expected a mapping of keys, got a list") is
// about, or nil when msg is not such an error. The YAML package shortens
// values longer than ten characters to their first seven and "..." (an
// overflowing integer, for instance); such a value is matched by its
// beginning, and short is true.
func wrongValue(msg string) (match func(*yaml.Node) bool, short bool) {
	if m := reGot.FindStringSubmatch(msg); m != nil {
		got, err := strconv.Unquote(m[1])
		if err != nil {
			return nil, false
		}
		if prefix, ok := strings.CutSuffix(got, "..."); ok && len(got) == 10 {
			return func(n *yaml.Node) bool {
				return n.Kind == yaml.ScalarNode && len(n.Value) > 10 && strings.HasPrefix(n.Value, prefix)
			}, true
		}
		return func(n *yaml.Node) bool { return n.Kind == yaml.ScalarNode && n.Value == got }, false
	}
	if m := reGotKind.FindStringSubmatch(msg); m != nil {
		kind := map[string]yaml.Kind{"list": yaml.SequenceNode, "mapping": yaml.MappingNode}[m[1]]
		return func(n *yaml.Node) bool { return n.Kind == kind }, false
	}
	return nil, false
}

// nodePath finds the first value (in file order) written on line for which
// match holds and returns its path (string keys and int list indices) and
// node. Keys are not values: only what follows a key, or a list item, is
// tried. An empty path (the top-level mapping itself) does not count.
func nodePath(n *yaml.Node, line int, match func(*yaml.Node) bool, path []any) ([]any, *yaml.Node, bool) {
	if len(path) > 0 && n.Line == line && match(n) {
		return path, n, true
	}
	switch n.Kind {
	case yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			if p, v, ok := nodePath(n.Content[i+1], line, match, append(path[:len(path):len(path)], n.Content[i].Value)); ok {
				return p, v, true
			}
		}
	case yaml.SequenceNode:
		for i, c := range n.Content {
			if p, v, ok := nodePath(c, line, match, append(path[:len(path):len(path)], i)); ok {
				return p, v, true
			}
		}
	}
	return nil, nil, false
}

// keyPath finds the mapping key called name written on line and returns the
// path (string keys and int list indices) of the mapping that holds it, and
// the key's node.
func keyPath(n *yaml.Node, name string, line int, path []any) ([]any, *yaml.Node, bool) {
	switch n.Kind {
	case yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			k := n.Content[i]
			if k.Value == name && k.Line == line {
				return path, k, true
			}
			if p, kn, ok := keyPath(n.Content[i+1], name, line, append(path[:len(path):len(path)], k.Value)); ok {
				return p, kn, true
			}
		}
	case yaml.SequenceNode:
		for i, c := range n.Content {
			if p, kn, ok := keyPath(c, name, line, append(path[:len(path):len(path)], i)); ok {
				return p, kn, true
			}
		}
	}
	return nil, nil, false
}

// FieldName writes a path (string keys and int list indices, as given to
// Doc.Line) as a field name: keys joined by dots, list indices in
// brackets, as in "transfers[2].rate".
func FieldName(path ...any) string { return fieldName(path) }

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
func checkKeys(file string, n *yaml.Node) *Error {
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
				return &Error{File: file, Line: k.Line, Msg: "a key must be a plain name, not a list or a mapping"}
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
				return &Error{File: file, Line: k.Line, Msg: "the merge key << needs a mapping or a list of mappings"}
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

// plainTags are the explicit YAML tags a value may carry in an nlens file:
// the core schema's (YAML 1.2 §10.3) and the non-specific "!".
var plainTags = []string{"!", "!!str", "!!int", "!!float", "!!bool", "!!null", "!!map", "!!seq"}

// MaxMappingKeys is the most keys one YAML mapping may hold. The YAML
// decoder checks a mapping for duplicate keys by comparing every pair, so
// its time grows with the square of the count: 84 000 groups in one study
// took 35 s (measured, DEVELOPERS.md), 5 000 take about 0.1 s. No site,
// study or rules file comes near it.
const MaxMappingKeys = 5000

// checkTags refuses values with an explicit tag nlens does not use (!!binary,
// !!timestamp, a local !tag) and explicitly tagged values that are not what
// their tag says (!!int x): the YAML decoder would drop the first silently
// or fail on the second without a position. It also refuses mappings of
// more than MaxMappingKeys keys.
func checkTags(file string, n *yaml.Node, path []any) *Error {
	if n.Style&yaml.TaggedStyle != 0 && n.Kind != yaml.AliasNode {
		bad := func(format string, args ...any) *Error {
			return &Error{File: file, Line: n.Line, Column: n.Column, Field: fieldName(path), Msg: fmt.Sprintf(format, args...)}
		}
		if !slices.Contains(plainTags, n.Tag) {
			return bad("YAML tag %s is not used in nlens files; write the value without it", n.Tag)
		}
		if n.Kind == yaml.ScalarNode && n.Tag != "!" {
			var v any
			if err := n.Decode(&v); err != nil {
				return bad("%q is not a valid %s value", n.Value, n.Tag)
			}
		}
	}
	switch n.Kind {
	case yaml.MappingNode:
		if k := len(n.Content) / 2; k > MaxMappingKeys {
			return &Error{File: file, Line: n.Line, Column: n.Column, Field: fieldName(path), Msg: fmt.Sprintf("this mapping has %d keys; nlens reads at most %d in one mapping", k, MaxMappingKeys)}
		}
		for i := 0; i+1 < len(n.Content); i += 2 {
			if e := checkTags(file, n.Content[i], path); e != nil {
				return e
			}
			if e := checkTags(file, n.Content[i+1], append(path[:len(path):len(path)], n.Content[i].Value)); e != nil {
				return e
			}
		}
	case yaml.SequenceNode:
		for i, c := range n.Content {
			if e := checkTags(file, c, append(path[:len(path):len(path)], i)); e != nil {
				return e
			}
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
		var out Errors
		for _, s := range te.Errors {
			e := &Error{File: file, Line: firstContentLine(data), Msg: s}
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
		return &Error{File: file, Line: line, Msg: msg}
	}
	msg := strings.TrimPrefix(s, "yaml: ")
	line := firstContentLine(data)
	switch {
	case reEncoding.MatchString(msg):
		var what string
		line, what = badCharacter(data)
		return &Error{File: file, Line: line, Msg: "YAML text must be UTF-8 without control characters; found " + what}
	case reAnchor.MatchString(msg):
		m := reAnchor.FindStringSubmatch(msg)
		mark, what := "*", fmt.Sprintf("the alias *%s names no anchor &%s defined before it", m[1], m[1])
		if m[2] == "value contains itself" {
			mark, what = "&", fmt.Sprintf("the value of anchor &%s contains an alias to itself", m[1])
		}
		if i := bytes.Index(data, []byte(mark+m[1])); i >= 0 {
			line = 1 + bytes.Count(data[:i], []byte("\n"))
		}
		return &Error{File: file, Line: line, Msg: "YAML: " + what}
	case strings.Contains(msg, "excessive aliasing") && root != nil:
		if a := firstAlias(root); a != nil {
			line = a.Line
		}
		return &Error{File: file, Line: line, Msg: "the aliases (*name) expand to too large a document"}
	}
	if root == nil {
		msg = "YAML syntax: " + msg // the text did not parse
	} else {
		msg = "YAML: " + msg
	}
	return &Error{File: file, Line: line, Msg: msg}
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

// Errorf builds an Error positioned at path in the document; field is
// the user-facing name of the path.
func (d *Doc) Errorf(field string, path []any, format string, args ...any) *Error {
	e := d.at(path)
	e.Field, e.Msg = field, fmt.Sprintf(format, args...)
	return e
}

// ErrorAt builds an Error positioned at path whose field is the path
// itself (FieldName), so a call site writes the path once. A path that
// does not exist to its end (a missing key) is placed on the deepest node
// that does.
func (d *Doc) ErrorAt(path []any, format string, args ...any) *Error {
	return d.Errorf(fieldName(path), path, format, args...)
}

// WrapAt positions err at path: the Error's message is err's text, and err
// stays reachable with errors.As (a numerical failure keeps its number).
func (d *Doc) WrapAt(path []any, err error) *Error {
	e := d.at(path)
	e.Field, e.Msg, e.Err = fieldName(path), err.Error(), err
	return e
}

func (d *Doc) at(path []any) *Error {
	e := &Error{}
	if d != nil {
		e.File = d.File
	}
	if n, last := d.find(path); n != nil {
		e.Line, e.Column = n.Line, n.Column
	} else {
		e.Line = last
	}
	return e
}
