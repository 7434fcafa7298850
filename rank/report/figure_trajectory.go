package report

import (
	"fmt"
	"image/color"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"nlens/rank"
)

// The trajectories figure: for each observed observable, the shift
// predicted over the years since the treatment began under each leading
// explanation, as rank computed it from posterior samples (magnitudes,
// isotope effects, site rates and treatment sizes drawn together): the
// median as a line and the 5–95 % band shaded. The treatment's start and
// the end of its time-limited parts are marked; every observation of the
// observable is drawn at its year (for a series of years, the other
// years' comparisons too). At an observed year the median is the value
// the tables' predicted shift (the posterior mean) summarises, within the
// samples' Monte Carlo error (figure_trajectory_test.go).

// Band and forcing styles.
const (
	bandAlpha     = 0x33 // of 0xff: five overlapping bands stay readable
	medianWidthPt = 1.6
)

var forcingColor = color.RGBA{0x55, 0x55, 0x55, 0xff}

// pathsToDraw returns the paths of the comparison's leading hypotheses in
// leading order, with their style index and rank. The declared treatment
// alone is drawn where the treatment acts on the model (it then has a
// course of its own); without one its path is no change.
func pathsToDraw(c rank.ComparisonResult) []drawnPath {
	hs, styles, ranks := leadingStyles(c)
	var out []drawnPath
	for j, h := range hs {
		if h.ID == rank.NoneID && len(c.Timeline) == 0 {
			continue
		}
		for _, p := range c.Paths {
			if p.Hypothesis == h.ID && len(p.Years) > 1 {
				out = append(out, drawnPath{path: p, h: h, style: styles[j], rank: ranks[j]})
				break
			}
		}
	}
	return out
}

type drawnPath struct {
	path  rank.Path
	h     rank.Hypothesis
	style style
	rank  int
}

// observedPoint is one observation drawn on a trajectory panel.
type observedPoint struct {
	years, shift, se float64
}

// observationsAt lists the observations of observable obs to draw on the
// trajectories of comparison ci: its own, and in a series of years the
// other comparisons' (the same treatment read at other times). A dose
// series' other comparisons had other treatments and are left out.
func observationsAt(r *rank.Result, ci int, obs string) []observedPoint {
	c := r.Comparisons[ci]
	members := []rank.ComparisonResult{c}
	for _, s := range r.Series {
		if s.Name != c.Series || c.Series == "" || s.Kind != "years" {
			continue
		}
		members = members[:0]
		for _, oc := range r.Comparisons {
			if oc.Series == c.Series {
				members = append(members, oc)
			}
		}
	}
	var out []observedPoint
	for _, m := range members {
		if (m.Years == nil) != (c.Years == nil) {
			continue
		}
		for _, o := range m.Observed {
			if o.Observable == obs && finiteAll(o.Shift, o.SE) {
				out = append(out, observedPoint{years: derefOr(m.Years, math.NaN()), shift: o.Shift, se: o.SE})
			}
		}
	}
	return out
}

// pathAt is the path's value at time t, linearly interpolated between its
// computed times (rank puts each observed year among them, so at an
// observation it is the computed value); NaN outside.
func pathAt(years, vals []float64, t float64) float64 {
	for k := 1; k < len(years) && k < len(vals); k++ {
		if t >= years[k-1] && t <= years[k] {
			if years[k] == years[k-1] {
				return vals[k]
			}
			f := (t - years[k-1]) / (years[k] - years[k-1])
			return vals[k-1] + f*(vals[k]-vals[k-1])
		}
	}
	return math.NaN()
}

// bandThumb is a legend thumbnail: the band's shade with the median's line.
type bandThumb struct{ style style }

func (t bandThumb) Thumbnail(c *draw.Canvas) {
	y := c.Center().Y
	h := vg.Points(4)
	c.FillPolygon(withAlpha(t.style.color, bandAlpha), []vg.Point{{X: c.Min.X, Y: y - h}, {X: c.Max.X - vg.Points(4), Y: y - h}, {X: c.Max.X - vg.Points(4), Y: y + h}, {X: c.Min.X, Y: y + h}})
	c.StrokeLine2(t.style.line(medianWidthPt), c.Min.X, y, c.Max.X-vg.Points(4), y)
}

// markThumb is a legend thumbnail for a vertical time mark.
type markThumb struct{ line draw.LineStyle }

func (t markThumb) Thumbnail(c *draw.Canvas) {
	x := c.Min.X + (c.Max.X-c.Min.X)/2
	c.StrokeLine2(t.line, x, c.Min.Y, x, c.Max.Y)
}

func withAlpha(c color.Color, a uint8) color.Color {
	r, g, b, _ := c.RGBA()
	// Premultiplied, as color.RGBA holds it.
	return color.RGBA{uint8(r >> 8 * uint32(a) / 0xff), uint8(g >> 8 * uint32(a) / 0xff), uint8(b >> 8 * uint32(a) / 0xff), a}
}

var (
	observationMark = draw.LineStyle{Color: referenceColor, Width: vg.Points(0.8), Dashes: []vg.Length{vg.Points(1), vg.Points(2)}}
	forcingMark     = draw.LineStyle{Color: forcingColor, Width: vg.Points(1.2), Dashes: []vg.Length{vg.Points(5), vg.Points(2), vg.Points(1), vg.Points(2)}}
)

// trajectoriesFigure: one panel per observed observable, time on x.
func trajectoriesFigure(r *rank.Result, ci int) (*figure, error) {
	c := r.Comparisons[ci]
	paths := pathsToDraw(c)
	if len(paths) == 0 {
		return nil, fmt.Errorf("no trajectory to draw")
	}
	logTime := c.Years == nil
	f := &figure{legend: newLegend(), align: true}
	ob := observedStyle()

	// The time axis: on a log axis only positive times can be drawn.
	tmin, tmax := math.Inf(1), math.Inf(-1)
	for _, dp := range paths {
		for _, t := range dp.path.Years {
			if t > 0 || !logTime {
				tmin, tmax = math.Min(tmin, t), math.Max(tmax, t)
			}
		}
	}
	if !(tmax > tmin) {
		return nil, fmt.Errorf("the trajectories span no time")
	}
	var obsYears []float64
	for _, o := range c.Observed {
		for _, p := range observationsAt(r, ci, o.Observable) {
			if !logTime && !slices.Contains(obsYears, p.years) {
				obsYears = append(obsYears, p.years)
			}
		}
	}
	slices.Sort(obsYears)
	unit := "years"
	if len(obsYears) == 1 && obsYears[0] == 1 {
		unit = "year"
	}
	obsLabel := "observed shift ± 1 SE at " + rank.JoinAnd(fmtYears(obsYears)) + " " + unit
	if logTime {
		obsLabel = "observed long-standing contrast ± 1 SE (shown at the right)"
	}
	f.legend.Add(legendText(&f.legend, obsLabel), errThumb{style: ob})
	for _, dp := range paths {
		f.legend.Add(legendText(&f.legend, candidateLegend(dp.rank, dp.h)), bandThumb{style: dp.style})
	}
	var events []rank.Event
	if !logTime {
		for _, ev := range c.Timeline {
			if ev.Years >= tmin && ev.Years <= tmax {
				events = append(events, ev)
				f.legend.Add(legendText(&f.legend, fmt.Sprintf("%s (year %s)", ev.Label, trimFloat(ev.Years))), markThumb{line: forcingMark})
			}
		}
	}

	for i, o := range c.Observed {
		p := plot.New()
		title := plain(c.Name)
		if len(obsYears) > 1 && c.Series != "" {
			// every year of the series is drawn, not only this comparison's
			title = "series " + quoteName(c.Series)
		}
		p.Title.Text = titleText(p, obsShort(o.Observable)+": "+title)
		p.Title.TextStyle.Font.Size = vg.Points(11)
		p.Y.Label.Text = "shift (‰)"
		if o.LogRatio {
			p.Y.Label.Text = "shift (ln ratio)"
		}
		if i == len(c.Observed)-1 {
			p.X.Label.Text = "years since the treatment began"
			if logTime {
				p.X.Label.Text = "years since the change began (log scale)"
			}
		}
		if logTime {
			p.X.Scale = plot.LogScale{}
			p.X.Tick.Marker = plot.LogTicks{Prec: -1}
		}
		points := observationsAt(r, ci, o.Observable)
		if logTime {
			for k := range points {
				points[k].years = tmax
			}
		}
		ylo, yhi := 0.0, 0.0
		for _, q := range points {
			ylo, yhi = math.Min(ylo, q.shift-q.se), math.Max(yhi, q.shift+q.se)
		}
		var lines []plot.Plotter
		for _, dp := range paths {
			band, median := pathXYs(dp.path, o.Observable, logTime)
			if len(median) < 2 {
				continue
			}
			if len(band) > 0 {
				poly, err := plotter.NewPolygon(band)
				if err != nil {
					return nil, err
				}
				poly.Color = withAlpha(dp.style.color, bandAlpha)
				poly.LineStyle.Width = 0
				p.Add(poly)
			}
			for _, xy := range append(band, median...) {
				ylo, yhi = math.Min(ylo, xy.Y), math.Max(yhi, xy.Y)
			}
			l, err := plotter.NewLine(median)
			if err != nil {
				return nil, err
			}
			l.LineStyle = dp.style.line(medianWidthPt)
			lines = append(lines, l)
		}
		zero, err := plotter.NewLine(plotter.XYs{{X: tmin, Y: 0}, {X: tmax, Y: 0}})
		if err != nil {
			return nil, err
		}
		zero.LineStyle = draw.LineStyle{Color: referenceColor, Width: vg.Points(0.8), Dashes: []vg.Length{vg.Points(3), vg.Points(3)}}
		p.Add(zero)
		marks := func(t float64, ls draw.LineStyle) error {
			m, err := plotter.NewLine(plotter.XYs{{X: t, Y: ylo}, {X: t, Y: yhi}})
			if err != nil {
				return err
			}
			m.LineStyle = ls
			p.Add(m)
			return nil
		}
		for _, ev := range events {
			if err := marks(ev.Years, forcingMark); err != nil {
				return nil, err
			}
		}
		if !logTime {
			for _, q := range points {
				if err := marks(q.years, observationMark); err != nil {
					return nil, err
				}
			}
		}
		p.Add(lines...)
		if len(points) > 0 {
			var pts yErrPoints
			for _, q := range points {
				pts.XYs = append(pts.XYs, plotter.XY{X: q.years, Y: q.shift})
				pts.YErrors = append(pts.YErrors, struct{ Low, High float64 }{q.se, q.se})
			}
			eb, err := plotter.NewYErrorBars(pts)
			if err != nil {
				return nil, err
			}
			eb.LineStyle = draw.LineStyle{Color: ob.color, Width: vg.Points(1)}
			eb.CapWidth = vg.Points(5)
			sc, err := plotter.NewScatter(pts.XYs)
			if err != nil {
				return nil, err
			}
			sc.GlyphStyle = ob.glyph()
			p.Add(eb, sc)
		}
		if logTime {
			// Room for the observed point's caps at the right edge.
			p.X.Max *= 1.6
		} else {
			padLinear(&p.X, 0.03)
		}
		padLinear(&p.Y, 0.05)
		f.panels = append(f.panels, p)
		f.heights = append(f.heights, vg.Points(trajPanelPt))
	}
	return f, nil
}

// pathXYs are the points of one observable's path as drawn: the band as a
// closed outline (low forward, high back) and the median. On a log time
// axis only positive times are drawn; non-finite values are skipped.
func pathXYs(p rank.Path, obs string, logTime bool) (band, median plotter.XYs) {
	med, lo, hi := p.Shifts[obs], p.Low[obs], p.High[obs]
	var upper plotter.XYs
	for k, t := range p.Years {
		if k >= len(med) || (logTime && !(t > 0)) || !finiteAll(t, med[k]) {
			continue
		}
		median = append(median, plotter.XY{X: t, Y: med[k]})
		if k < len(lo) && k < len(hi) && finiteAll(lo[k], hi[k]) {
			band = append(band, plotter.XY{X: t, Y: lo[k]})
			upper = append(upper, plotter.XY{X: t, Y: hi[k]})
		}
	}
	if len(band) < 2 {
		return nil, median
	}
	for k := len(upper) - 1; k >= 0; k-- {
		band = append(band, upper[k])
	}
	return band, median
}

// fmtYears formats years for a legend ("3", "0.5").
func fmtYears(ys []float64) []string {
	out := make([]string, len(ys))
	for i, y := range ys {
		out[i] = trimFloat(y)
	}
	return out
}

// padLinear widens a linear axis by a fraction of its span on each side,
// so that markers and error-bar caps at the data's edge are drawn whole.
func padLinear(a *plot.Axis, frac float64) {
	span := a.Max - a.Min
	if !(span > 0) {
		span = math.Max(math.Abs(a.Max), 1)
	}
	a.Min -= frac * span
	a.Max += frac * span
}

func derefOr(p *float64, v float64) float64 {
	if p == nil {
		return v
	}
	return *p
}

// trajectoryCaption is the figure's caption for the report.
func trajectoryCaption(c rank.ComparisonResult) string {
	var b strings.Builder
	if c.Years == nil {
		b.WriteString("Predicted approach of each observed observable to its new steady state under the leading explanations (logarithmic time axis): the line is the median and the shaded band the 5–95 % range of posterior samples of the magnitudes, isotope effects, site rates and treatment sizes. The observed long-standing contrast (± 1 SE) is shown at the right.")
		return b.String()
	}
	b.WriteString("Predicted shift of each observed observable over the years since the treatment began under the leading explanations: the line is the median and the shaded band the 5–95 % range of posterior samples of the magnitudes, isotope effects, site rates and treatment sizes. ")
	if len(c.Timeline) > 0 {
		b.WriteString("The dash-dotted line marks the treatment's start (and the end of any time-limited part); black points are ")
	} else {
		b.WriteString("Black points are ")
	}
	b.WriteString("the observations (± 1 SE) at their years, on dotted lines.")
	return b.String()
}
