package report

import (
	"bytes"
	"strings"
	"testing"
	"unicode/utf8"

	"nlens/rank"
)

func renderText(t *testing.T, r *rank.Result) string {
	t.Helper()
	var b bytes.Buffer
	if err := Text(&b, r, testKB(t)); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

func TestTextGolden(t *testing.T) {
	for _, tc := range []struct {
		name string
		r    *rank.Result
	}{
		{"text-transient.golden", transientResult()},
		{"text-multi.golden", multiResult()},
	} {
		t.Run(tc.name, func(t *testing.T) {
			golden(t, tc.name, []byte(renderText(t, tc.r)))
		})
	}
}

// TestTextReadsLikeAnEmail checks the e-mail against its brief: 100–300
// words for one comparison, no table, lines of at most 72 characters,
// glossed terms, the pattern, the leader with its posterior and size, the
// ambiguity, the next measurement and a caution.
func TestTextReadsLikeAnEmail(t *testing.T) {
	t.Parallel()
	r := transientResult()
	got := renderText(t, r)
	words := len(strings.Fields(got))
	// 100–300 words: the length the issue asks for.
	if words < 100 || words > 300 {
		t.Errorf("got %d words, want 100–300:\n%s", words, got)
	}
	for i, line := range strings.Split(got, "\n") {
		if n := utf8.RuneCountInString(line); n > textWidth {
			t.Errorf("line %d has %d characters, want ≤ %d: %q", i+1, n, textWidth, line)
		}
		if strings.Contains(line, "|") || strings.Contains(line, "---") {
			t.Errorf("line %d looks like a table: %q", i+1, line)
		}
	}
	flat := strings.Join(strings.Fields(got), " ")
	for _, want := range []string{
		"soil-nitrate δ15N was 6.1 ‰ higher",                                                         // the fixture's observed shift, −6.0 − (−12.1)
		"more nitrification, about 62 % of the NH4+ outflow (90 % interval 45–80 %) instead of 21 %", // the leader and its size (fixture magnitude)
		"the flux about 2.4 times its baseline",                                                      // the fixture's flux ratio
		"posterior probability of 0.58 (how strongly",                                                // posterior with its gloss
		"What the data cannot yet tell apart",
		"What I would measure next: δ15N of soil NH4+", // the fixture's top measurement
		"expected information gain;",                   // bits glossed
		"standard error",                               // SE glossed on first use
		"One caution: δ15N evidence is indicative, not proof",
	} {
		if !strings.Contains(flat, want) {
			t.Errorf("the e-mail lacks %q:\n%s", want, got)
		}
	}
	// The posterior is glossed once, not in every paragraph.
	if n := strings.Count(flat, "how strongly the data"); n != 1 {
		t.Errorf("posterior glossed %d times, want once", n)
	}
}

// TestTextFollowsTheResult checks that the words change with the result:
// the same renderer must say something different when "none" leads or no
// candidate fits.
func TestTextFollowsTheResult(t *testing.T) {
	t.Parallel()
	got := strings.Join(strings.Fields(renderText(t, multiResult())), " ")
	for _, want := range []string{
		"(a long-standing contrast)",                                       // comparison 1 has no years
		"the nitrate pool was about 3 times as large",                      // ln(4.5/1.5) = ln 3
		"an undeclared input of atmospheric N deposition",                  // a source in a pair
		"None of the explanations nlens considers reproduces this pattern", // comparison 2 has NoFit
		"N cycling did not change",                                         // comparison 3: none leads
	} {
		if !strings.Contains(got, want) {
			t.Errorf("the e-mail lacks %q:\n%s", want, got)
		}
	}
}

func TestWrap(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name, in string
		width    int
		want     string
	}{
		{"fits", "a b c", 10, "a b c"},
		{"breaks at spaces", "aaa bbb ccc", 7, "aaa bbb\nccc"},
		{"unit stays with its number", "xxxxxx 6.5 ‰ higher", 10, "xxxxxx\n6.5 ‰\nhigher"},
		{"± stays with its number", "xxxxx (± 3.8)", 8, "xxxxx\n(± 3.8)"},
		{"long word alone", "abcdefghijk x", 5, "abcdefghijk\nx"},
		{"runes not bytes", "δδδδ δδδδ", 9, "δδδδ δδδδ"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := wrap(tc.in, tc.width); got != tc.want {
				t.Errorf("wrap(%q, %d) = %q, want %q", tc.in, tc.width, got, tc.want)
			}
		})
	}
}
