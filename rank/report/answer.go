package report

import (
	"io"
	"strings"
	"unicode/utf8"
)

// Answer is a quick calculation shown with its formula and source.
type Answer struct {
	Title   string     `json:"title"`
	Formula []string   `json:"formula"`
	Source  string     `json:"source"`
	Inputs  []Quantity `json:"inputs"`
	Results []Quantity `json:"results"`
	Notes   []string   `json:"notes,omitempty"`
}

// Quantity is a named number with its unit.
type Quantity struct {
	Name  string   `json:"name"`
	Value *float64 `json:"value"` // nil when undefined (never NaN in output)
	Unit  string   `json:"unit"`
}

// Q builds a Quantity; a non-finite value becomes undefined.
func Q(name string, v float64, unit string) Quantity { return Quantity{name, finite(v), unit} }

// WriteAnswer renders an answer as text or JSON.
func WriteAnswer(w io.Writer, a Answer, format string) error {
	if format == FormatJSON {
		return writeJSON(w, a)
	}
	ew := &errWriter{w: w}
	ew.printf("%s\n\n", a.Title)
	indent := func(text string) string {
		if utf8.RuneCountInString(text) <= 76 {
			return text
		}
		return strings.ReplaceAll(wrap(text, 76), "\n", "\n      ")
	}
	for _, f := range a.Formula {
		ew.printf("  %s\n", indent(f))
	}
	ew.printf("  %s\n\n", indent("Source: "+a.Source))
	rows := func(qs []Quantity) [][]string {
		var out [][]string
		for _, q := range qs {
			v := "undefined"
			if q.Value != nil {
				v = fixed(*q.Value, decimalsFor(*q.Value))
			}
			out = append(out, []string{q.Name, v, q.Unit})
		}
		return out
	}
	if err := table(ew, []string{"input", "value", "unit"}, "lrl", rows(a.Inputs)); err != nil {
		return err
	}
	ew.printf("\n")
	if err := table(ew, []string{"result", "value", "unit"}, "lrl", rows(a.Results)); err != nil {
		return err
	}
	for _, n := range a.Notes {
		ew.printf("\n%s\n", wrap("Note: "+n, 78))
	}
	return ew.err
}
