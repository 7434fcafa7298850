package report

import (
	"fmt"

	"nlens/knowledge"
	"nlens/rank"
)

// measurementsFigure: predicted shifts of the top next measurements.
func measurementsFigure(c rank.ComparisonResult) (*figure, error) {
	hs, styles, ranks := leadingStyles(c)
	if len(c.Measurements) == 0 {
		return nil, fmt.Errorf("no measurement to draw")
	}
	f := &figure{legend: newLegend()}
	for j, h := range hs {
		f.legend.Add(legendText(&f.legend, candidateLegend(ranks[j], h)+" (mean ± 1 sd)"), errThumb{style: styles[j]})
	}
	top := c.Measurements
	if len(top) > maxMeasureRows {
		top = top[:maxMeasureRows]
	}
	for _, logRatio := range []bool{false, true} {
		var rows []string
		preds := make([]series, len(hs))
		for j := range hs {
			preds[j].style = styles[j]
		}
		for _, m := range top {
			if (m.Unit == knowledge.UnitLogRatio) != logRatio {
				continue
			}
			row := float64(len(rows))
			rows = append(rows, fmt.Sprintf("%s (%s)", m.Label, count(m.Bits, fixed(m.Bits, 2), "bit", "bits")))
			for j, h := range hs {
				p, ok := m.Predicted[h.ID]
				if !ok {
					continue
				}
				preds[j].at, preds[j].val, preds[j].err = append(preds[j].at, row), append(preds[j].val, p.Mean), append(preds[j].err, p.SD)
			}
		}
		if len(rows) == 0 {
			continue
		}
		xlabel := "predicted shift, treatment − control (‰)"
		title := "Next measurements: " + plain(c.Name)
		if logRatio {
			xlabel = "predicted shift, ln(treatment / control)"
			title = "Next measurements, pool sizes and fluxes: " + plain(c.Name)
		}
		p, h, err := dotPanel(title, xlabel, rows, preds)
		if err != nil {
			return nil, err
		}
		f.panels = append(f.panels, p)
		f.heights = append(f.heights, h)
	}
	return f, nil
}
