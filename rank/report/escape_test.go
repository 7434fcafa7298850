package report

import (
	"bytes"
	"strings"
	"testing"
)

// Escape writes every character that is not graphic (unicode.IsGraphic)
// as a visible escape in Go's notation; expected strings written by hand.
func TestEscape(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name, in, one, text string
	}{
		{"plain", "foliage δ15N ‰ ± 2", "foliage δ15N ‰ ± 2", "foliage δ15N ‰ ± 2"},
		{"escape sequence and bell", "a\x1b[31mb\x07", `a\x1b[31mb\x07`, `a\x1b[31mb\x07`},
		{"carriage return and tab", "x\ry\tz", `x\x0dy\x09z`, `x\x0dy\x09z`},
		{"line feed", "one\ntwo", `one\x0atwo`, "one\ntwo"},
		{"C1 control (CSI)", "a\u009bb", `a\u009bb`, `a\u009bb`},
		{"bidi override and zero-width space", "abc\u202edef\u200b", `abc\u202edef\u200b`, `abc\u202edef\u200b`},
		{"line separator", "a\u2028b", `a\u2028b`, `a\u2028b`},
		{"non-breaking space is graphic", "5\u00a0kg", "5\u00a0kg", "5\u00a0kg"},
		{"byte that is not UTF-8", "caf\xe9", `caf\xe9`, `caf\xe9`},
		{"tag character beyond the BMP", "a\U000E0041", `a\U000e0041`, `a\U000e0041`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			if got := Escape(tt.in); got != tt.one {
				t.Errorf("Escape(%q) = %q, want %q", tt.in, got, tt.one)
			}
			if got := EscapeText(tt.in); got != tt.text {
				t.Errorf("EscapeText(%q) = %q, want %q", tt.in, got, tt.text)
			}
		})
	}
}

// EscapeWriter joins a character split between two writes before deciding,
// so δ (two bytes) written one byte at a time comes out whole.
func TestEscapeWriterSplitCharacter(t *testing.T) {
	t.Parallel()
	var buf bytes.Buffer
	w := EscapeWriter(&buf)
	for _, b := range []byte("δ\x1b\u202e\n") {
		if n, err := w.Write([]byte{b}); n != 1 || err != nil {
			t.Fatalf("Write = %d, %v", n, err)
		}
	}
	if got, want := buf.String(), "δ\\x1b\\u202e\n"; got != want {
		t.Errorf("got %q, want %q", got, want)
	}
}

// A table cell is escaped before the columns are measured, so the escape
// counts in its width and the columns stay aligned: the header and both
// rows of this table, whose last column is right-aligned, end in the same
// column (the rule line below the header runs on past them).
func TestTableEscapesCells(t *testing.T) {
	t.Parallel()
	var buf bytes.Buffer
	if err := table(&buf, []string{"group", "n"}, "lr", [][]string{{"a\x1bb", "1"}, {"plain", "22"}}); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSuffix(buf.String(), "\n"), "\n")
	if len(lines) != 4 || !strings.Contains(lines[2], `a\x1bb`) {
		t.Fatalf("table:\n%s", buf.String())
	}
	for _, l := range []string{lines[2], lines[3]} {
		if len(l) != len(lines[0]) {
			t.Errorf("lines of different lengths:\n%s", buf.String())
			break
		}
	}
}
