// Package inputtest holds what the fuzz tests of nlens's input parsers
// share: the bounds a positioned input error's line must respect and the
// upkeep of the committed seed corpora. It is test support (like
// net/http/httptest) and computes nothing for users.
package inputtest

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
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

// SyncSeedCorpus writes (update set) or compares each seed as a corpus file
// "seed-NAME" in dir, in Go's fuzz corpus format: "go test fuzz v1" and one
// line per value ([]byte, bool or byte).
func SyncSeedCorpus(t testing.TB, dir string, seeds map[string][]any, update bool) {
	t.Helper()
	for name, vals := range seeds {
		want := []byte("go test fuzz v1\n")
		for _, v := range vals {
			switch v := v.(type) {
			case []byte:
				want = fmt.Appendf(want, "[]byte(%q)\n", v)
			case bool:
				want = fmt.Appendf(want, "bool(%v)\n", v)
			case byte:
				want = fmt.Appendf(want, "byte(%q)\n", v)
			default:
				t.Fatalf("seed %s: no corpus encoding for %T", name, v)
			}
		}
		path := filepath.Join(dir, "seed-"+name)
		if update {
			if err := os.MkdirAll(dir, 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(path, want, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		got, err := os.ReadFile(path)
		if err != nil {
			t.Errorf("seed %s: %v (run with -update-corpus)", name, err)
			continue
		}
		if !bytes.Equal(got, want) {
			t.Errorf("seed %s: the committed corpus file differs from the seed (run with -update-corpus)", name)
		}
	}
}
