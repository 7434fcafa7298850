package report

import (
	"fmt"
	"io"
	"strings"
	"unicode"
	"unicode/utf8"
)

// Text from users' files (titles, group names, CSV headers, site and rule
// descriptions) reaches the terminal through the human-readable renderers.
// A control character in it could move the cursor, clear the screen, ring
// the bell or, as an escape sequence, recolour or retitle the terminal; a
// bidirectional or zero-width control could make the text read other than
// it is. Every such character is written as a visible escape instead, in
// Go's notation: ESC as \x1b, U+202E as \u202e, a byte that is not UTF-8
// as \xff. A character is kept when unicode.IsGraphic holds for it
// (letters, marks, numbers, punctuation, symbols and spaces, so δ, ‰ and ±
// stay as they are).

// escapeRune appends the visible form of the rune r read from size bytes
// (for a byte that is not UTF-8, r is utf8.RuneError and size 1; b is that
// byte).
func escapeRune(sb *strings.Builder, r rune, size int, b byte, keepNewline bool) {
	switch {
	case r == utf8.RuneError && size <= 1:
		fmt.Fprintf(sb, `\x%02x`, b)
	case r == '\n' && keepNewline, visible(r):
		sb.WriteRune(r)
	case r < 0x80:
		fmt.Fprintf(sb, `\x%02x`, r)
	case r <= 0xFFFF:
		fmt.Fprintf(sb, `\u%04x`, r)
	default:
		fmt.Fprintf(sb, `\U%08x`, r)
	}
}

// visible reports whether a rune is written as it is: a graphic character,
// or one of the citation markers the Markdown writer places in its own
// text (plain removes them from users' names, so they never come from a
// file) and replaces before anything is written.
func visible(r rune) bool {
	return unicode.IsGraphic(r) || r == markOpen || r == markOpenIn || r == markClose
}

func escape(s string, keepNewline bool) string {
	clean := true
	for _, r := range s {
		if !(visible(r) || r == '\n' && keepNewline) || r == utf8.RuneError {
			clean = false
			break
		}
	}
	if clean {
		return s
	}
	var sb strings.Builder
	for i := 0; i < len(s); {
		r, size := utf8.DecodeRuneInString(s[i:])
		escapeRune(&sb, r, size, s[i], keepNewline)
		i += size
	}
	return sb.String()
}

// Escape returns s, one line of text (a title, a name, a table cell), with
// every character that is not graphic, line breaks included, written as a
// visible escape.
func Escape(s string) string { return escape(s, false) }

// EscapeText is Escape for text of several lines: line feeds are kept.
func EscapeText(s string) string { return escape(s, true) }

// escapeCells escapes each cell of a table row; a line feed stays (some
// cells hold two lines on purpose).
func escapeCells(cells []string) []string {
	out := make([]string, len(cells))
	for i, c := range cells {
		out[i] = EscapeText(c)
	}
	return out
}

func escapeRows(rows [][]string) [][]string {
	out := make([][]string, len(rows))
	for i, r := range rows {
		out[i] = escapeCells(r)
	}
	return out
}

// EscapeWriter returns a writer that passes everything written to it to w
// through EscapeText, for the human-readable output of a command (a
// character split between two writes is joined first).
func EscapeWriter(w io.Writer) io.Writer { return &escapeWriter{w: w} }

type escapeWriter struct {
	w       io.Writer
	pending []byte // the start of a character split between writes
}

func (e *escapeWriter) Write(p []byte) (int, error) {
	data := append(e.pending, p...)
	// Hold back an incomplete character at the end (at most 3 bytes).
	cut := len(data)
	for back := 1; back <= 3 && back <= len(data); back++ {
		if c := data[len(data)-back]; utf8.RuneStart(c) {
			if !utf8.FullRune(data[len(data)-back:]) {
				cut = len(data) - back
			}
			break
		}
	}
	e.pending = append([]byte(nil), data[cut:]...)
	if _, err := io.WriteString(e.w, EscapeText(string(data[:cut]))); err != nil {
		return 0, err
	}
	return len(p), nil
}
