package report

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"nlens/rank"
)

// Figure kinds: the three figures drawn for each comparison.
const (
	// FigureShifts: observed shift (± SE) against the shift predicted
	// (mean ± sd) under each leading explanation, per observable.
	FigureShifts = "shifts"
	// FigureTrajectories: predicted shift of each observed observable over
	// the years since the treatment began, median and 90 % band of
	// posterior samples, with the treatment's start and the observations
	// marked.
	FigureTrajectories = "trajectories"
	// FigureMeasurements: the top next measurements, predicted shift ± sd
	// under each leading explanation.
	FigureMeasurements = "measurements"
)

// Figure image formats.
const (
	FigureSVG = "svg"
	FigurePNG = "png"
)

// Figure layout. Widths suit a page or an e-mail; PNGs are rendered at
// pngDPI so they stay sharp when a reader zooms.
const (
	figWidth        = 16 * vg.Centimeter
	figMargin       = 4  // pt around the drawing
	legendFontPt    = 10 // pt
	pngDPI          = 150
	markerRadius    = 3   // pt
	rowStepPt       = 9   // pt between the markers of one row: more than a marker's diameter
	rowGapPt        = 14  // pt between rows
	panelOverheadPt = 70  // pt for a dot-chart panel's title, axis, tick labels and label
	trajPanelPt     = 130 // pt per trajectory panel
	maxMeasureRows  = 5
)

// Palette: the observed data in near-black, the leading explanations in
// five colours chosen for this program. They differ in lightness as well
// as hue, and each explanation also has its own marker shape and line dash,
// so no figure relies on colour alone. palette_test.go checks that every
// pair stays distinguishable under simulated protan, deutan and tritan
// colour vision.
var (
	observedColor   = color.RGBA{0x22, 0x22, 0x22, 0xff}
	referenceColor  = color.RGBA{0x9a, 0x9a, 0x9a, 0xff} // zero line, observation time
	candidateColors = []color.RGBA{
		{0x1b, 0x4f, 0x8c, 0xff}, // deep blue
		{0xe3, 0x90, 0x1d, 0xff}, // amber
		{0x7d, 0xc3, 0xe8, 0xff}, // sky
		{0xb8, 0x40, 0x6a, 0xff}, // raspberry
		{0x8c, 0x6d, 0x2f, 0xff}, // bronze
	}
	candidateShapes = []draw.GlyphDrawer{draw.TriangleGlyph{}, draw.SquareGlyph{}, draw.PyramidGlyph{}, draw.RingGlyph{}, draw.CrossGlyph{}}
	candidateDashes = [][]vg.Length{nil, {vg.Points(6), vg.Points(3)}, {vg.Points(2), vg.Points(2)}, {vg.Points(8), vg.Points(3), vg.Points(2), vg.Points(3)}, {vg.Points(4), vg.Points(4)}}
)

// style is how one series is drawn.
type style struct {
	color color.Color
	shape draw.GlyphDrawer
	dash  []vg.Length
}

func observedStyle() style { return style{color: observedColor, shape: draw.CircleGlyph{}} }

func candidateStyle(i int) style {
	k := i % len(candidateColors)
	return style{color: candidateColors[k], shape: candidateShapes[k], dash: candidateDashes[k]}
}

func (s style) glyph() draw.GlyphStyle {
	return draw.GlyphStyle{Color: s.color, Radius: vg.Points(markerRadius), Shape: s.shape}
}

func (s style) line(widthPt float64) draw.LineStyle {
	return draw.LineStyle{Color: s.color, Width: vg.Points(widthPt), Dashes: s.dash}
}

// figureSpec is one figure of a comparison as the bundle writes it.
type figureSpec struct {
	Kind       string
	Comparison int
	// Base is the file name without extension: "shifts", or "shifts-2"
	// when the result has several comparisons.
	Base         string
	Alt, Caption string
}

// figurePlan lists the figures a result has: the shifts figure always, the
// trajectories when the leading explanations have paths, the measurements
// when there are any.
func figurePlan(r *rank.Result) []figureSpec {
	var out []figureSpec
	for i, c := range r.Comparisons {
		suffix := ""
		if len(r.Comparisons) > 1 {
			suffix = "-" + strconv.Itoa(i+1)
		}
		name := plain(c.Name)
		out = append(out, figureSpec{FigureShifts, i, FigureShifts + suffix,
			"Observed and predicted shifts, " + name,
			"Observed shift (treatment − control, ± 1 SE) and the shift predicted under each leading explanation (posterior mean ± 1 sd), per observable."})
		if len(pathsToDraw(c)) > 0 {
			out = append(out, figureSpec{FigureTrajectories, i, FigureTrajectories + suffix, "Predicted trajectories, " + name, trajectoryCaption(c)})
		}
		if len(c.Measurements) > 0 {
			out = append(out, figureSpec{FigureMeasurements, i, FigureMeasurements + suffix,
				"Next measurements, " + name,
				"Predicted shift of the most informative next measurements under each leading explanation (mean ± 1 sd, including measurement noise)."})
		}
	}
	return out
}

// Figure draws one figure of one comparison (0-based index) as SVG or PNG.
// The output is deterministic: the same result gives the same bytes.
func Figure(w io.Writer, r *rank.Result, comparison int, kind, format string) error {
	if comparison < 0 || comparison >= len(r.Comparisons) {
		return fmt.Errorf("figure %s: comparison %d out of range (the result has %d)", kind, comparison+1, len(r.Comparisons))
	}
	if format != FigureSVG && format != FigurePNG {
		return fmt.Errorf("figure %s: unsupported format %q (svg or png)", kind, format)
	}
	c := r.Comparisons[comparison]
	var fig *figure
	var err error
	switch kind {
	case FigureShifts:
		fig, err = shiftsFigure(c)
	case FigureTrajectories:
		fig, err = trajectoriesFigure(r, comparison)
	case FigureMeasurements:
		fig, err = measurementsFigure(c)
	default:
		return fmt.Errorf("unknown figure %q (shifts, trajectories or measurements)", kind)
	}
	if err != nil {
		return fmt.Errorf("figure %s of %q: %w", kind, c.Name, err)
	}
	data, err := fig.render(format)
	if err != nil {
		return fmt.Errorf("figure %s of %q: %w", kind, c.Name, err)
	}
	_, err = w.Write(data)
	return err
}

// figure is a stack of panels above a shared legend.
type figure struct {
	panels []*plot.Plot
	// heights of the panels in points; aligned panels share the height.
	heights []vg.Length
	// align lines up the panels' data areas (same x axis).
	align  bool
	legend plot.Legend
}

func newLegend() plot.Legend {
	l := plot.NewLegend()
	l.TextStyle.Font.Size = vg.Points(legendFontPt)
	l.Left, l.Top = true, true
	l.Padding = vg.Points(4)
	l.ThumbnailWidth = vg.Points(28)
	return l
}

// legendText fits a legend label into the figure width, shortening it with
// an ellipsis rather than letting it run off the page.
func legendText(l *plot.Legend, s string) string {
	limit := figWidth - 2*figMargin - l.ThumbnailWidth - vg.Points(12)
	if l.TextStyle.Rectangle(s).Max.X <= limit {
		return s
	}
	r := []rune(s)
	for len(r) > 1 && l.TextStyle.Rectangle(string(r)+"…").Max.X > limit {
		r = r[:len(r)-1]
	}
	return strings.TrimSpace(string(r)) + "…"
}

// titleText fits a title into the figure width in the same way.
func titleText(p *plot.Plot, s string) string {
	limit := figWidth - 2*figMargin - vg.Points(8)
	if p.Title.TextStyle.Rectangle(s).Max.X <= limit {
		return s
	}
	r := []rune(s)
	for len(r) > 1 && p.Title.TextStyle.Rectangle(string(r)+"…").Max.X > limit {
		r = r[:len(r)-1]
	}
	return strings.TrimSpace(string(r)) + "…"
}

func legendHeight(l *plot.Legend) vg.Length {
	r := l.Rectangle(draw.Canvas{})
	return r.Max.Y - r.Min.Y
}

// render draws the figure. A panic inside gonum/plot (a log scale given a
// non-positive value, for instance) becomes an error instead of a crash.
func (f *figure) render(format string) (data []byte, err error) {
	defer func() {
		if p := recover(); p != nil {
			data, err = nil, fmt.Errorf("drawing failed: %v", p)
		}
	}()
	lh := legendHeight(&f.legend) + vg.Points(10)
	var total vg.Length
	for _, h := range f.heights {
		total += h
	}
	height := total + lh + 2*figMargin
	var cw vg.CanvasWriterTo
	switch format {
	case FigureSVG:
		cw = vgsvg.New(figWidth, height)
	case FigurePNG:
		cw = vgimg.PngCanvas{Canvas: vgimg.NewWith(vgimg.UseWH(figWidth, height), vgimg.UseDPI(pngDPI))}
	}
	dc := draw.Crop(draw.New(cw), figMargin, -figMargin, figMargin, -figMargin)
	legendArea := dc
	legendArea.Max.Y = dc.Min.Y + lh
	plotArea := dc
	plotArea.Min.Y = dc.Min.Y + lh
	if f.align && len(f.panels) > 1 {
		rows := make([][]*plot.Plot, len(f.panels))
		for i, p := range f.panels {
			rows[i] = []*plot.Plot{p}
		}
		cs := plot.Align(rows, draw.Tiles{Rows: len(f.panels), Cols: 1, PadY: vg.Points(4)}, plotArea)
		for i, p := range f.panels {
			p.Draw(cs[i][0])
		}
	} else {
		top := plotArea.Max.Y
		for i, p := range f.panels {
			c := plotArea
			c.Max.Y = top
			c.Min.Y = top - f.heights[i]
			p.Draw(c)
			top = c.Min.Y
		}
	}
	legendArea.Min.Y += vg.Points(2)
	legendArea.Max.Y -= vg.Points(4)
	f.legend.Draw(legendArea)
	var buf bytes.Buffer
	if _, err := cw.WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// errThumb draws a legend thumbnail: a marker on a horizontal error bar.
type errThumb struct {
	style style
	line  bool // a line instead of an error bar (trajectories)
}

func (t errThumb) Thumbnail(c *draw.Canvas) {
	y := c.Center().Y
	if t.line {
		c.StrokeLine2(t.style.line(1.6), c.Min.X, y, c.Max.X-vg.Points(4), y)
		if t.style.shape != nil {
			c.DrawGlyph(t.style.glyph(), c.Center())
		}
		return
	}
	bar := draw.LineStyle{Color: t.style.color, Width: vg.Points(1)}
	x0, x1 := c.Min.X+vg.Points(4), c.Max.X-vg.Points(4)
	c.StrokeLine2(bar, x0, y, x1, y)
	c.StrokeLine2(bar, x0, y-vg.Points(3), x0, y+vg.Points(3))
	c.StrokeLine2(bar, x1, y-vg.Points(3), x1, y+vg.Points(3))
	c.DrawGlyph(t.style.glyph(), c.Center())
}

// series is one set of points with symmetric error bars.
type series struct {
	label string
	style style
	// points: value (x in a dot chart, y in a trajectory) and its error.
	at, val, err []float64
}

// leadingStyles pairs the comparison's leading hypotheses with their
// style, in rank order; the colour follows the rank among the leading.
func leadingStyles(c rank.ComparisonResult) ([]rank.Hypothesis, []style, []int) {
	var hs []rank.Hypothesis
	var st []style
	var ranks []int
	for k, i := range leadingIndex(c) {
		hs = append(hs, c.Hypotheses[i])
		st = append(st, candidateStyle(k))
		ranks = append(ranks, i+1)
	}
	return hs, st, ranks
}

// candidateLegend is "#1 nitrification (more or less), posterior 0.63".
func candidateLegend(rank int, h rank.Hypothesis) string {
	return fmt.Sprintf("#%d %s, posterior %s", rank, shortLabel(h), fmtProb(h.Posterior))
}

// dotPanel draws rows of labelled values with horizontal error bars, the
// first row at the top; each series is offset within its row band.
func dotPanel(title, xlabel string, rows []string, ss []series) (*plot.Plot, vg.Length, error) {
	p := plot.New()
	p.Title.Text = titleText(p, title)
	p.X.Label.Text = xlabel
	p.Y.Padding = 0
	n := len(rows)
	k := len(ss)
	// Each row is one unit high; series sit at evenly spaced offsets in
	// the middle 70 % of it.
	offset := func(j int) float64 {
		if k == 1 {
			return 0
		}
		return 0.35 - 0.7*float64(j)/float64(k-1)
	}
	zero, err := plotter.NewLine(plotter.XYs{{X: 0, Y: -0.5}, {X: 0, Y: float64(n) - 0.5}})
	if err != nil {
		return nil, 0, err
	}
	zero.LineStyle = draw.LineStyle{Color: referenceColor, Width: vg.Points(0.8), Dashes: []vg.Length{vg.Points(3), vg.Points(3)}}
	p.Add(zero)
	for j, s := range ss {
		var pts errPoints
		for i := range s.at {
			if !finiteAll(s.val[i], s.err[i]) {
				continue
			}
			row := s.at[i]
			pts.XYs = append(pts.XYs, plotter.XY{X: s.val[i], Y: float64(n-1) - row + offset(j)})
			pts.XErrors = append(pts.XErrors, struct{ Low, High float64 }{s.err[i], s.err[i]})
		}
		if len(pts.XYs) == 0 {
			continue
		}
		eb, err := plotter.NewXErrorBars(pts)
		if err != nil {
			return nil, 0, err
		}
		eb.LineStyle = draw.LineStyle{Color: s.style.color, Width: vg.Points(1)}
		eb.CapWidth = vg.Points(5)
		sc, err := plotter.NewScatter(pts.XYs)
		if err != nil {
			return nil, 0, err
		}
		sc.GlyphStyle = s.style.glyph()
		p.Add(eb, sc)
	}
	padLinear(&p.X, 0.05)
	names := make([]string, n)
	for i, r := range rows {
		names[n-1-i] = r
	}
	p.NominalY(names...)
	p.Y.Min, p.Y.Max = -0.5, float64(n)-0.5
	rowH := vg.Points(float64(max(k, 1))*rowStepPt + rowGapPt)
	return p, vg.Points(panelOverheadPt) + vg.Length(n)*rowH, nil
}

type errPoints struct {
	plotter.XYs
	plotter.XErrors
}

type yErrPoints struct {
	plotter.XYs
	plotter.YErrors
}

func finiteAll(vs ...float64) bool {
	for _, v := range vs {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}
