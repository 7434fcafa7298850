// Package inputtest holds what the fuzz tests of nlens's input parsers
// share: the bounds a positioned input error's line must respect. It is
// test support (like net/http/httptest) and computes nothing for users.
package inputtest

import (
	"bytes"
	"strings"
	"unicode"
	"unicode/utf16"
)

// LineCount bounds the number of lines of text: YAML also breaks lines at a
// lone carriage return, NEL, LS and PS (YAML 1.1 §5.4), so each of those
// counts as well as line feeds.
func LineCount(text []byte) int {
	n := 1 + bytes.Count(text, []byte("\n")) + bytes.Count(text, []byte("\r"))
	for _, r := range []string{"\u0085", "\u2028", "\u2029"} {
		n += bytes.Count(text, []byte(r))
	}
	return n
}

// YAMLBlank reports whether data holds no YAML content: only byte-order
// marks (U+FEFF), white space and comment lines. Text that starts with a
// UTF-16 byte-order mark is read as UTF-16, as the YAML parser does.
func YAMLBlank(data []byte) bool {
	text := strings.TrimPrefix(string(data), "\ufeff")
	if len(data) >= 2 && (data[0] == 0xff && data[1] == 0xfe || data[0] == 0xfe && data[1] == 0xff) {
		units := make([]uint16, (len(data)-2)/2)
		for i := range units {
			lo, hi := data[2+2*i], data[3+2*i]
			if data[0] == 0xfe {
				lo, hi = hi, lo
			}
			units[i] = uint16(lo) | uint16(hi)<<8
		}
		text = string(utf16.Decode(units))
	}
	for line := range strings.SplitSeq(text, "\n") {
		line = strings.TrimFunc(line, func(r rune) bool { return unicode.IsSpace(r) || r == '\ufeff' })
		if line != "" && !strings.HasPrefix(line, "#") {
			return false
		}
	}
	return true
}
