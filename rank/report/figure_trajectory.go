package report

import (
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"nlens/rank"
)

// pathsToDraw returns the paths of the comparison's leading hypotheses in
// leading order, with their style index and rank.
func pathsToDraw(c rank.ComparisonResult) []drawnPath {
	hs, styles, ranks := leadingStyles(c)
	var out []drawnPath
	for j, h := range hs {
		if h.ID == rank.NoneID {
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

// trajectoriesFigure: one panel per observed observable, time on x.
func trajectoriesFigure(c rank.ComparisonResult) (*figure, error) {
	paths := pathsToDraw(c)
	if len(paths) == 0 {
		return nil, fmt.Errorf("no trajectory to draw")
	}
	logTime := c.Years == nil
	f := &figure{legend: newLegend(), align: true}
	ob := observedStyle()
	obsLabel := fmt.Sprintf("observed shift ± 1 SE at %s years", trimFloat(derefOr(c.Years, 0)))
	if logTime {
		obsLabel = "observed long-standing contrast ± 1 SE (shown at the right)"
	}
	f.legend.Add(legendText(&f.legend, obsLabel), errThumb{style: ob})
	for _, dp := range paths {
		f.legend.Add(legendText(&f.legend, candidateLegend(dp.rank, dp.h)), errThumb{style: style{color: dp.style.color, dash: dp.style.dash}, line: true})
	}
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
	tObs := tmax
	if c.Years != nil {
		tObs = *c.Years
	}
	for i, o := range c.Observed {
		p := plot.New()
		p.Title.Text = titleText(p, obsShort(o.Observable)+": "+plain(c.Name))
		p.Title.TextStyle.Font.Size = vg.Points(11)
		unit := "shift (‰)"
		if o.LogRatio {
			unit = "shift (ln ratio)"
		}
		p.Y.Label.Text = unit
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
		ylo, yhi := math.Min(0, o.Shift-o.SE), math.Max(0, o.Shift+o.SE)
		for _, dp := range paths {
			vals := dp.path.Shifts[o.Observable]
			var xy plotter.XYs
			for k, t := range dp.path.Years {
				if k >= len(vals) || (logTime && !(t > 0)) || !finiteAll(t, vals[k]) {
					continue
				}
				xy = append(xy, plotter.XY{X: t, Y: vals[k]})
				ylo, yhi = math.Min(ylo, vals[k]), math.Max(yhi, vals[k])
			}
			if len(xy) < 2 {
				continue
			}
			l, err := plotter.NewLine(xy)
			if err != nil {
				return nil, err
			}
			l.LineStyle = dp.style.line(1.6)
			p.Add(l)
		}
		zero, err := plotter.NewLine(plotter.XYs{{X: tmin, Y: 0}, {X: tmax, Y: 0}})
		if err != nil {
			return nil, err
		}
		zero.LineStyle = draw.LineStyle{Color: referenceColor, Width: vg.Points(0.8), Dashes: []vg.Length{vg.Points(3), vg.Points(3)}}
		p.Add(zero)
		if !logTime {
			mark, err := plotter.NewLine(plotter.XYs{{X: tObs, Y: ylo}, {X: tObs, Y: yhi}})
			if err != nil {
				return nil, err
			}
			mark.LineStyle = draw.LineStyle{Color: referenceColor, Width: vg.Points(0.8), Dashes: []vg.Length{vg.Points(1), vg.Points(2)}}
			p.Add(mark)
		}
		if finiteAll(o.Shift, o.SE) {
			pts := yErrPoints{XYs: plotter.XYs{{X: tObs, Y: o.Shift}}, YErrors: plotter.YErrors{{Low: o.SE, High: o.SE}}}
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
