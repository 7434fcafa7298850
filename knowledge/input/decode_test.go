package input

import (
	"strings"
	"testing"
)

// Decode positions every problem on the line a reader would look at. The
// YAML package (go.yaml.in/yaml/v3 v3.0.6) counts parser-error lines from
// 0, leaves out the first line, and gives no line at all for encoding and
// alias problems; these cases pin the corrections. Inputs are invented;
// the lines were counted by hand.
func TestDecodePositions(t *testing.T) {
	t.Parallel()
	type inner struct {
		Rate *float64 `yaml:"rate"`
	}
	type doc struct {
		Name  string           `yaml:"name"`
		Items []inner          `yaml:"items"`
		Map   map[string]inner `yaml:"map"`
		Any   any              `yaml:"any"`
	}
	tests := []struct {
		name, text, want string
	}{
		{"parser error counted from 0", "name: a\n- b\n", "f.yaml:2: YAML syntax: did not find expected key"},
		{"parser error on the first line", "...\n", "f.yaml:1: YAML syntax: did not find expected node content"},
		{"parser error in a flow list", "name: a\nitems: [{rate: 1},\nmap: {}\n", "f.yaml:2: YAML syntax: did not find expected ',' or ']'"},
		{"scanner error counted from 1", "name: a\nitems:\n  rate: 1\n rate: 2\n", "f.yaml:4: YAML syntax: did not find expected key"},
		{"scanner message beginning like a parser one", "name: a\n\nitems: & x\n", "f.yaml:3: YAML syntax: did not find expected alphabetic or numeric character"},
		{"tab indentation", "name: a\nitems:\n\t- rate: 1\n", "f.yaml:3: YAML syntax: a tab character indents this line; indent YAML with spaces only"},
		{"control character", "name: a\nitems: []\nmap: {x\x07: {}}\n", "f.yaml:3: YAML text must be UTF-8 without control characters; found character U+0007"},
		{"not UTF-8", "name: a\n\nname2: \xff\n", "f.yaml:3: YAML text must be UTF-8 without control characters; found byte 0xFF, which is not UTF-8"},
		{"alias to no anchor", "name: a\nitems: *none\n", "f.yaml:2: YAML: the alias *none names no anchor &none defined before it"},
		{"anchor containing itself", "name: a\nany: &l [*l]\n", "f.yaml:2: YAML: the value of anchor &l contains an alias to itself"},
		{"alias bomb", aliasBomb, "f.yaml:4: the aliases (*name) expand to too large a document"},
		{"merge of a scalar", "name: a\nmap:\n  x: {<<: 5}\n", "f.yaml:3: the merge key << needs a mapping or a list of mappings"},
		{"list as a key", "name: a\n? [1, 2]\n: x\n", "f.yaml:2: a key must be a plain name, not a list or a mapping"},
		{"unknown key", "name: a\nitems:\n  - {rate: 1}\n  - {rat: 2}\n", "f.yaml:4: items[1].rat: unknown key (keys here: rate)"},
		{"duplicate key", "name: a\nmap:\n  x: {rate: 1}\n  x: {rate: 2}\n", "f.yaml:4: map.x: the key appears twice in one mapping (first at line 3)"},
		{"wrong type", "name: a\nmap:\n  x: {rate: fast}\n", `f.yaml:3: map.x.rate: expected a number, got "fast"`},
		{"second document", "name: a\n---\nname: b\n", "f.yaml:2: a second YAML document starts here; the file must hold one document"},
		{"not a mapping", "\n\n- name\n", "f.yaml:3: expected a mapping of keys at the top level"},
		{"empty", "# nothing\n", "f.yaml: the file is empty"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var v doc
			_, err := Decode("f.yaml", []byte(tt.text), &v)
			if err == nil {
				t.Fatalf("no error; want %q", tt.want)
			}
			if got := err.Error(); got != tt.want {
				t.Errorf("got  %q\nwant %q", got, tt.want)
			}
		})
	}
}

// aliasBomb expands nine lists of nine four levels deep (9⁴ = 6561 values
// from a few lines): the YAML package refuses it as excessive aliasing, and
// the error points at the first alias, on line 4.
var aliasBomb = "name: a\nany:\n  a: &a [x, x, x, x, x, x, x, x, x]\n" +
	"  b: &b [" + strings.Repeat("*a, ", 8) + "*a]\n" +
	"  c: &c [" + strings.Repeat("*b, ", 8) + "*b]\n" +
	"  d: &d [" + strings.Repeat("*c, ", 8) + "*c]\n" +
	"  e: [" + strings.Repeat("*d, ", 8) + "*d]\n"

// The YAML decoder reports some problems with a line but no field: a
// number too large for an int (it shortens the value to seven characters
// and "..."), a list or a mapping where the other is expected, an unknown
// tag, a value that is not what its explicit tag says (issue 15, item 10).
// Decode gives each its field path and column. Inputs are invented; lines
// and columns were counted by hand (1-based, as in encoding/csv).
func TestDecodeGivesEveryValueErrorAField(t *testing.T) {
	t.Parallel()
	type stat struct {
		Mean *float64 `yaml:"mean"`
		N    *int     `yaml:"n"`
	}
	type doc struct {
		Title  string                     `yaml:"title"`
		Groups map[string]map[string]stat `yaml:"groups"`
		Items  []stat                     `yaml:"items"`
	}
	tests := []struct {
		name, text string
		line, col  int
		field, msg string
	}{
		{"overflowing n", "title: a\ngroups:\n  g:\n    foliage: {mean: 1, n: 99999999999999999999}\n",
			4, 27, "groups.g.foliage.n", "the number 99999999999999999999 is too large for this field"},
		{"overflowing n, second of two on a line", "title: a\nitems: [{n: 2}, {n: 123456789012345678901}]\n",
			2, 21, "items[1].n", "the number 123456789012345678901 is too large for this field"},
		{"long text where a number is expected", "title: a\nitems: [{mean: twelve-and-a-half}]\n",
			2, 16, "items[0].mean", `expected a number, got "twelve-and-a-half"`},
		{"list where a mapping is expected", "title: a\ngroups:\n  g: [1, 2]\n",
			3, 6, "groups.g", "expected a mapping of keys, got a list"},
		{"mapping where a list is expected", "title: a\nitems: {n: 2}\n",
			2, 8, "items", "expected a list, got a mapping"},
		{"local tag", "title: a\nitems:\n  - {mean: !custom 1}\n",
			3, 12, "items[0].mean", "YAML tag !custom is not used in nlens files; write the value without it"},
		{"unknown core-style tag", "title: !!foo a\n",
			1, 8, "title", "YAML tag !!foo is not used in nlens files; write the value without it"},
		{"binary tag", "title: !!binary aGk=\n",
			1, 8, "title", "YAML tag !!binary is not used in nlens files; write the value without it"},
		{"value not what its tag says", "title: a\nitems:\n  - {n: !!int x}\n",
			3, 9, "items[0].n", `"x" is not a valid !!int value`},
		{"tagged key", "title: a\n!!foo items: []\n",
			2, 1, "", "YAML tag !!foo is not used in nlens files; write the value without it"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			var v doc
			_, err := Decode("f.yaml", []byte(tt.text), &v)
			es := Flatten(err)
			if len(es) == 0 {
				t.Fatalf("got %v, want one *Error", err)
			}
			e := es[0]
			if e.File != "f.yaml" || e.Line != tt.line || e.Column != tt.col || e.Field != tt.field || e.Msg != tt.msg {
				t.Errorf("got  {%s %d:%d %q %q}\nwant {f.yaml %d:%d %q %q}", e.File, e.Line, e.Column, e.Field, e.Msg, tt.line, tt.col, tt.field, tt.msg)
			}
		})
	}
}

// Explicit tags of the core schema that match their value, and the
// non-specific tag "!", are accepted.
func TestDecodeAcceptsPlainTags(t *testing.T) {
	t.Parallel()
	var v struct {
		A string   `yaml:"a"`
		B int      `yaml:"b"`
		C float64  `yaml:"c"`
		D []string `yaml:"d"`
		E string   `yaml:"e"`
	}
	text := "a: !!str 12\nb: !!int 3\nc: !!float 2.5\nd: !!seq [x]\ne: ! 7\n"
	if _, err := Decode("f.yaml", []byte(text), &v); err != nil {
		t.Fatal(err)
	}
	if v.A != "12" || v.B != 3 || v.C != 2.5 || len(v.D) != 1 || v.E != "7" {
		t.Errorf("decoded %+v", v)
	}
}
