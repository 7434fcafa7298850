package input

import (
	"errors"
	"testing"

	"nlens/knowledge/inputtest"
)

// FuzzDecode: for any text, Decode never panics, and a rejection is a list
// of *Error naming the file, each with a message, a line within the text
// (0 only for a text with no YAML content), and a column ≥ 0. Run it with
//
//	go test ./knowledge/input -run '^$' -fuzz '^FuzzDecode$' -fuzztime 60s -fuzzminimizetime 5s
func FuzzDecode(f *testing.F) {
	for _, seed := range []string{
		"name: a\nitems:\n  - {rate: 1}\n",
		"name: !!foo a\n",
		"items: [{rate: 99999999999999999999}]\n",
		"map: [1, 2]\n",
		"items: {rate: 1}\n",
		"name: a\n? [1, 2]\n: x\n",
		"a: &x [*x]\n",
		"\na:\n<<:\n-\n?\n-\n",
		"name: \"\\e[31m\"\n",
		"",
	} {
		f.Add([]byte(seed))
	}
	type inner struct {
		Rate *float64 `yaml:"rate"`
		N    *int     `yaml:"n"`
	}
	type doc struct {
		Name  string           `yaml:"name"`
		Items []inner          `yaml:"items"`
		Map   map[string]inner `yaml:"map"`
		Any   any              `yaml:"any"`
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		var v doc
		d, err := Decode("f.yaml", data, &v)
		if err == nil {
			if d == nil || d.Root == nil {
				t.Fatal("no error and no document")
			}
			return
		}
		var first *Error
		if !errors.As(err, &first) {
			t.Fatalf("rejection is not an *Error: %T %v", err, err)
		}
		lines := inputtest.LineCount(data)
		for _, e := range Flatten(err) {
			switch {
			case e.File != "f.yaml":
				t.Errorf("error names file %q: %v", e.File, e)
			case e.Msg == "":
				t.Errorf("error says nothing: %#v", e)
			case e.Line < 0 || e.Line > lines+1 || e.Column < 0:
				t.Errorf("error position %d:%d is outside the %d-line text: %v", e.Line, e.Column, lines, e)
			case e.Line == 0 && !inputtest.YAMLBlank(data):
				t.Errorf("error has no line although the text has content: %v", e)
			}
		}
	})
}
