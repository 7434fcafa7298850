package report

import (
	"bytes"
	"strings"
	"testing"
)

// JSON is written without HTML escaping: "&", "<" and ">" in labels come
// through literally, not as \u0026, \u003c, \u003e.
func TestJSONNotHTMLEscaped(t *testing.T) {
	r := transientResult()
	r.StudyTitle = "N & P <trial>"
	r.Comparisons[0].Name = "urea & lime <plot 3>"
	r.Comparisons[0].Hypotheses[0].Label = "nitrification & leaching"
	var b bytes.Buffer
	if err := JSON(&b, r); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	for _, want := range []string{`"urea & lime <plot 3>"`, `"nitrification & leaching"`} {
		if !strings.Contains(out, want) {
			t.Errorf("JSON lacks %s literally", want)
		}
	}
	for _, esc := range []string{`\u0026`, `\u003c`, `\u003e`} {
		if strings.Contains(out, esc) {
			t.Errorf("JSON holds the HTML escape %s", esc)
		}
	}
	// The other JSON writers share the encoder.
	b.Reset()
	if err := WriteAnswer(&b, Answer{Title: "a & b <c>"}, FormatJSON); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(b.String(), `"a & b <c>"`) {
		t.Errorf("answer JSON escaped: %s", b.String())
	}
}
