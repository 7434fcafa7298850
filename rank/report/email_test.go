package report

import (
	"bytes"
	"math"
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

// TestTextGolden is a regression pin: the e-mail text of the fixtures as
// last reviewed (see golden in fixture_test.go).
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

// TestTextReadsLikeAnEmail checks the e-mail against issue 13: 100–250
// words for one comparison, no table, lines of at most 72 characters, the
// pattern, the leader with its posterior and size in plain words, the next
// measurement and every caution.
func TestTextReadsLikeAnEmail(t *testing.T) {
	t.Parallel()
	r := transientResult()
	got := renderText(t, r)
	// 100–250 words: the length issue 13 asks for one comparison.
	if n := words([]string{got}); n < 100 || n > emailMaxOne {
		t.Errorf("got %d words, want 100–%d:\n%s", n, emailMaxOne, got)
	}
	for i, line := range strings.Split(got, "\n") {
		if n := utf8.RuneCountInString(line); n > textWidth {
			t.Errorf("line %d has %d characters, want ≤ %d: %q", i+1, n, textWidth, line)
		}
		if strings.Contains(line, "|") || strings.Contains(line, "---") {
			t.Errorf("line %d looks like a table: %q", i+1, line)
		}
	}
	// Hand computation from the fixture: soil nitrate SE √(2.2²/5 + 2.6²/5)
	// = 1.52; bulk soil +0.1 ‰ with SE √(0.6²/6 + 0.7²/6) = 0.38, z = 0.27.
	flat := strings.Join(strings.Fields(got), " ")
	for _, want := range []string{
		"soil-nitrate δ15N was 6.1 ‰ higher (standard error 1.5 ‰)", // the fixture's shift, −6.0 − (−12.1); SE glossed on first use
		"bulk-soil δ15N did not differ beyond noise",                // +0.1 ± 0.4 ‰: z < 2
		"more nitrification, with a posterior probability of 0.58",  // the leader (fixture posterior)
		"about 62 % of the NH4+ outflow instead of 21 % (90 % interval 45–80 %)",
		"that flux about 2.4 times as high as at baseline", // the fixture's flux ratio
		"I would measure δ15N of soil NH4+ next",           // the fixture's top measurement
		"δ15N evidence is indicative, not proof",
		"depends on the isotope effects nlens assumes and on the site model",
		"several lines of evidence, local regulations and licensed professionals",
		"full report",
	} {
		if !strings.Contains(flat, want) {
			t.Errorf("the e-mail lacks %q:\n%s", want, got)
		}
	}
}

// TestTextFollowsTheResult checks that the words change with the result:
// the same renderer must say something different when "none" leads or no
// candidate fits, and the no-fit warning comes before any ranking.
func TestTextFollowsTheResult(t *testing.T) {
	t.Parallel()
	got := strings.Join(strings.Fields(renderText(t, multiResult())), " ")
	for _, want := range []string{
		"(a long-standing contrast)",                            // comparison 1 has no years
		"the soil nitrate pool was about 3 times as high",       // ln(4.5/1.5) = ln 3
		"an undeclared input of atmospheric N deposition",       // a source in a pair
		"No candidate fits “burned vs unburned”",                // comparison 2 has NoFit
		"N cycling did not change: every shift is within noise", // comparison 3: none leads, z < 2
		"sampled 1.5 years after",
	} {
		if !strings.Contains(got, want) {
			t.Errorf("the e-mail lacks %q:\n%s", want, got)
		}
	}
	if i, j := strings.Index(got, "No candidate fits"), strings.Index(got, "best-supported"); i < 0 || j < 0 || i > j {
		t.Errorf("the no-fit warning does not come before the first ranking:\n%s", got)
	}
	if n := words([]string{got}); n > emailMaxMany {
		t.Errorf("three comparisons in %d words, want ≤ %d", n, emailMaxMany)
	}
}

// The words of size and certainty come from one rule: a shift of z ≈ 4 is
// never "within noise" or "small relative to its uncertainty", and a log
// ratio of +0.50 reads as about 65 % higher, not "about the same size"
// (the two contradictions issue 13 quotes).
func TestWordingRule(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name      string
		shift, se float64
		want      strength
	}{
		{"z = 3.8 (issue 13)", 0.69, 0.18, clearShift},
		{"z = 2.0", 0.50, 0.25, smallDetectable},
		{"z = 1.9", 0.19, 0.1, withinNoise},
		{"negative, z = 5", -1, 0.2, clearShift},
		{"zero", 0, 0.3, withinNoise},
	} {
		if got := shiftStrength(tc.shift, tc.se); got != tc.want {
			t.Errorf("%s: strength %d, want %d", tc.name, got, tc.want)
		}
	}
	for _, tc := range []struct {
		ratio float64
		want  string
	}{
		{math.Exp(0.50), "about 65 % higher"}, // e^0.5 = 1.649 (issue 13)
		{2.0, "about twice as high"},
		{7.9, "about 7.9 times as high"},
		{0.15, "about 85 % lower"},
		{1.02, "about the same"},
	} {
		if got := changeWords(tc.ratio); got != tc.want {
			t.Errorf("changeWords(%g) = %q, want %q", tc.ratio, got, tc.want)
		}
	}
	o := obs("flux:mineralization", 1, math.Exp(0.5), 0.25*math.Sqrt(5/2.0), 0.25*math.Sqrt(5/2.0), 5, true)
	if got := shiftClause(o, true); !strings.Contains(got, "about 65 % higher, small but detectable") {
		t.Errorf("ln ratio +0.50 ± 0.25 worded %q", got)
	}
	for _, tc := range []struct{ got, want string }{
		{yearsWords(1), "one year"},
		{yearsWords(12), "twelve years"},
		{yearsWords(1.5), "1.5 years"},
		{bits(1), "1 bit"},
		{bits(0.62), "0.62 bits"},
		{count(1, "1", "further candidate is", "further candidates are"), "1 further candidate is"},
	} {
		if tc.got != tc.want {
			t.Errorf("got %q, want %q", tc.got, tc.want)
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

// A two-mode posterior is worded as two values, never as one interval
// spanning both (DESIGN §5), and without nested parentheses.
func TestTwoModesWording(t *testing.T) {
	t.Parallel()
	m := share("more-denitrification", "more", "denitrification", "the NO3− outflow", 0.56, 0.38, 0.89, 0.06, 13)
	m.Modes = []rank.Mode{{Best: 0.52, Low: 0.36, High: 0.66, Mass: 0.6}, {Best: 0.86, Low: 0.78, High: 0.90, Mass: 0.4}}
	mw := magnitudeWords{m}
	if got, want := mw.short(), "52% (36–66%) or 86% (78–90%), was 6.0%; flux 13-fold"; got != want {
		t.Errorf("short = %q, want %q", got, want)
	}
	if got := mw.prose(); !strings.HasPrefix(got, "either about 52 % (36–66 %) or about 86 % (78–90 %) of the NO3− outflow instead of 6.0 %") {
		t.Errorf("prose = %q", got)
	}
}

// A flux that was nearly absent before is said in kg N/ha/yr beside its
// baseline, not as a ratio in the hundreds (issue 9: sizes that mean
// something in the field); below the threshold it stays a ratio.
func TestLargeFluxRatioSaidAbsolutely(t *testing.T) {
	t.Parallel()
	m := share("more-volatilization", "more", "NH3 volatilization", "the NH4+ outflow", 0.17, 0.003, 0.5, 0.0003, 1759)
	m.Flux.Baseline, m.Flux.Median = 0.01, 17.59
	mw := magnitudeWords{m}
	if got := mw.short(); !strings.Contains(got, "flux 18\u00a0kg\u00a0N/ha/yr, was 0.01") || strings.Contains(got, "fold") {
		t.Errorf("short = %q", got)
	}
	if got := mw.prose(); !strings.Contains(got, "that flux about 18 kg N/ha/yr against 0.01 at baseline") {
		t.Errorf("prose = %q", got)
	}
	m = share("more-nitrification", "more", "nitrification", "the NH4+ outflow", 0.6, 0.4, 0.8, 0.2, 2.4)
	if got := (magnitudeWords{m}).short(); !strings.HasSuffix(got, "flux 2.4-fold") {
		t.Errorf("short = %q", got)
	}
}
