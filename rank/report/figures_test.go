package report

import (
	"bytes"
	"fmt"
	"html"
	"image/png"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"

	"nlens/rank"
)

func renderFigure(t *testing.T, r *rank.Result, comparison int, kind, format string) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := Figure(&b, r, comparison, kind, format); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func TestFigureGolden(t *testing.T) {
	for _, tc := range []struct {
		name       string
		r          *rank.Result
		comparison int
		kind       string
	}{
		{"svg-shifts-transient.golden", transientResult(), 0, FigureShifts},
		{"svg-trajectories-transient.golden", transientResult(), 0, FigureTrajectories},
		{"svg-measurements-transient.golden", transientResult(), 0, FigureMeasurements},
		{"svg-shifts-steady.golden", multiResult(), 0, FigureShifts},             // ‰ and ln-ratio panels
		{"svg-trajectories-steady.golden", multiResult(), 0, FigureTrajectories}, // log time axis, paths start at t = 0
	} {
		t.Run(tc.name, func(t *testing.T) {
			golden(t, tc.name, renderFigure(t, tc.r, tc.comparison, tc.kind, FigureSVG))
		})
	}
}

// TestFiguresDeterministic renders every figure twice in both formats.
func TestFiguresDeterministic(t *testing.T) {
	t.Parallel()
	for _, r := range []*rank.Result{transientResult(), multiResult()} {
		for _, f := range figurePlan(r) {
			for _, format := range []string{FigureSVG, FigurePNG} {
				a := renderFigure(t, r, f.Comparison, f.Kind, format)
				b := renderFigure(t, r, f.Comparison, f.Kind, format)
				if !bytes.Equal(a, b) {
					t.Errorf("%s.%s differs between two renders", f.Base, format)
				}
				if format == FigureSVG && bytes.Contains(a, []byte("NaN")) {
					t.Errorf("%s.svg contains NaN", f.Base)
				}
			}
		}
	}
}

func TestFigurePNG(t *testing.T) {
	t.Parallel()
	data := renderFigure(t, transientResult(), 0, FigureShifts, FigurePNG)
	cfg, err := png.DecodeConfig(bytes.NewReader(data))
	if err != nil {
		t.Fatal(err)
	}
	// 16 cm at 150 dpi: 16 / 2.54 × 150 = 944.9 px, rounded up to whole pixels.
	if cfg.Width != 945 {
		t.Errorf("PNG width %d px, want 945", cfg.Width)
	}
	if cfg.Height < 200 {
		t.Errorf("PNG height %d px is too small for a figure", cfg.Height)
	}
}

func TestFigurePlan(t *testing.T) {
	t.Parallel()
	var got []string
	for _, f := range figurePlan(multiResult()) {
		got = append(got, f.Base)
	}
	// multiResult: comparison 1 has paths and measurements, 2 has a path
	// and no measurement, 3 has neither (only "none" and a path-less
	// single lead).
	want := "shifts-1 trajectories-1 measurements-1 shifts-2 trajectories-2 shifts-3"
	if strings.Join(got, " ") != want {
		t.Errorf("plan %q, want %q", strings.Join(got, " "), want)
	}
	got = got[:0]
	for _, f := range figurePlan(transientResult()) {
		got = append(got, f.Base)
	}
	if want := "shifts trajectories measurements"; strings.Join(got, " ") != want {
		t.Errorf("plan %q, want %q", strings.Join(got, " "), want)
	}
}

// TestFigureLogGuard: on a log time axis, zero and negative times are left
// out rather than handed to gonum/plot (whose LogScale panics on them); a
// path with no positive time is an error, not a crash; NaN values are
// skipped.
func TestFigureLogGuard(t *testing.T) {
	t.Parallel()
	r := multiResult()
	c := &r.Comparisons[0]
	c.Paths[0].Shifts["foliage"][5] = math.NaN()
	c.Paths[1].Years = []float64{-1, 0, 0.5, 2}
	c.Paths[1].Shifts = map[string][]float64{"foliage": {0, 0, 1, 1.5}, "pool:nitrate": {0, 0, 0.5, 0.8}}
	for _, format := range []string{FigureSVG, FigurePNG} {
		data := renderFigure(t, r, 0, FigureTrajectories, format)
		if format == FigureSVG && bytes.Contains(data, []byte("NaN")) {
			t.Error("NaN reached the SVG")
		}
	}
	for i := range c.Paths {
		c.Paths[i].Years = []float64{0, 0}
	}
	err := Figure(&bytes.Buffer{}, r, 0, FigureTrajectories, FigureSVG)
	if err == nil || !strings.Contains(err.Error(), "no trajectory") && !strings.Contains(err.Error(), "span no time") {
		t.Errorf("got %v, want an error saying the trajectories cannot be drawn", err)
	}
}

func TestFigureErrors(t *testing.T) {
	t.Parallel()
	r := transientResult()
	for _, tc := range []struct {
		name, kind, format string
		comparison         int
		want               string
	}{
		{"unknown kind", "pie", FigureSVG, 0, `unknown figure "pie"`},
		{"bad format", FigureShifts, "bmp", 0, `unsupported format "bmp"`},
		{"comparison out of range", FigureShifts, FigureSVG, 3, "comparison 4 out of range"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			err := Figure(&bytes.Buffer{}, r, tc.comparison, tc.kind, tc.format)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("got %v, want an error containing %q", err, tc.want)
			}
		})
	}
}

func TestLegendTextFits(t *testing.T) {
	t.Parallel()
	l := newLegend()
	long := strings.Repeat("nitrification (more or less) + ", 10)
	got := legendText(&l, long)
	if !strings.HasSuffix(got, "…") {
		t.Errorf("a long label was not shortened: %q", got)
	}
	limit := figWidth - 2*figMargin - l.ThumbnailWidth
	if w := l.TextStyle.Rectangle(got).Max.X; w > limit {
		t.Errorf("shortened label is %.1f pt wide, more than the %.1f pt available", w.Points(), limit.Points())
	}
	if short := "#1 more nitrification"; legendText(&l, short) != short {
		t.Error("a short label was changed")
	}
}

// svgText is one unrotated text element of an SVG written by vgsvg.
type svgText struct {
	x, y, size float64 // left edge and baseline in pt (y down), font size
	s          string
}

var (
	reText = regexp.MustCompile(`<text x="([-0-9.e]+)" y="([-0-9.e]+)" transform="scale\(1, -1\)"\s*style="[^"]*font-size:([0-9.]+)px[^"]*">([^<]*)</text>`)
	reG    = regexp.MustCompile(`<g[ >]|</g>`)
)

// svgTexts returns the texts drawn at the top level of the SVG (rotated
// texts sit in nested groups and are skipped).
func svgTexts(svg string) []svgText {
	var out []svgText
	depth := 0
	pos := 0
	for _, loc := range reG.FindAllStringIndex(svg, -1) {
		if depth == 1 {
			out = append(out, textsIn(svg[pos:loc[0]])...)
		}
		if svg[loc[0]+1] == '/' {
			depth--
		} else {
			depth++
		}
		pos = loc[1]
	}
	return out
}

func textsIn(s string) []svgText {
	var out []svgText
	for _, m := range reText.FindAllStringSubmatch(s, -1) {
		x, _ := strconv.ParseFloat(m[1], 64)
		y, _ := strconv.ParseFloat(m[2], 64)
		size, _ := strconv.ParseFloat(m[3], 64)
		out = append(out, svgText{x, y, size, html.UnescapeString(m[4])})
	}
	return out
}

// TestFigureLabelsDoNotOverlap measures every horizontal text of every
// figure with the font gonum/plot uses (Liberation Serif metrics) and
// checks that no two boxes overlap, and that each lies inside the page.
func TestFigureLabelsDoNotOverlap(t *testing.T) {
	t.Parallel()
	sty := func(size float64) text.Style {
		return text.Style{Font: font.From(plot.DefaultFont, vg.Points(size)), Handler: plot.DefaultTextHandler}
	}
	type box struct {
		x0, x1, y0, y1 float64
		s              string
	}
	for _, r := range []*rank.Result{transientResult(), multiResult()} {
		for _, f := range figurePlan(r) {
			svg := string(renderFigure(t, r, f.Comparison, f.Kind, FigureSVG))
			texts := svgTexts(svg)
			if len(texts) < 5 {
				t.Fatalf("%s: found only %d texts; the SVG parser no longer matches vgsvg's output", f.Base, len(texts))
			}
			var boxes []box
			for _, tx := range texts {
				st := sty(tx.size)
				w := st.Rectangle(tx.s).Max.X.Points()
				ext := st.FontExtents()
				// SVG y grows downwards here (vgsvg writes −y in a flipped group).
				b := box{tx.x, tx.x + w, -tx.y - ext.Descent.Points(), -tx.y + ext.Ascent.Points(), tx.s}
				if b.x0 < 0 || b.x1 > figWidth.Points()+0.5 {
					t.Errorf("%s: %q runs off the page (x %.1f–%.1f pt)", f.Base, tx.s, b.x0, b.x1)
				}
				boxes = append(boxes, b)
			}
			// Boxes may touch: allow half a point of shared edge.
			const slack = 0.5
			for i := range boxes {
				for j := i + 1; j < len(boxes); j++ {
					a, b := boxes[i], boxes[j]
					if a.x0 < b.x1-slack && b.x0 < a.x1-slack && a.y0 < b.y1-slack && b.y0 < a.y1-slack {
						t.Errorf("%s: %q and %q overlap", f.Base, a.s, b.s)
					}
				}
			}
		}
	}
}

func ExampleFigure() {
	var b bytes.Buffer
	if err := Figure(&b, transientResult(), 0, FigureShifts, FigureSVG); err != nil {
		fmt.Println(err)
	}
	fmt.Println(strings.HasPrefix(b.String(), "<?xml"))
	// Output: true
}
