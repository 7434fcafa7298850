package report

import (
	"fmt"

	"nlens/rank"
)

// shiftsFigure: observed against predicted shifts, one panel per unit.
func shiftsFigure(c rank.ComparisonResult) (*figure, error) {
	hs, styles, ranks := leadingStyles(c)
	f := &figure{legend: newLegend()}
	ob := observedStyle()
	f.legend.Add(legendText(&f.legend, "observed shift ± 1 SE"), errThumb{style: ob})
	for j, h := range hs {
		f.legend.Add(legendText(&f.legend, candidateLegend(ranks[j], h)+" (mean ± 1 sd)"), errThumb{style: styles[j]})
	}
	for _, logRatio := range []bool{false, true} {
		var rows []string
		obs := series{label: "observed", style: ob}
		preds := make([]series, len(hs))
		for j := range hs {
			preds[j].style = styles[j]
		}
		for _, o := range c.Observed {
			if o.LogRatio != logRatio {
				continue
			}
			row := float64(len(rows))
			rows = append(rows, obsShort(o.Observable))
			obs.at, obs.val, obs.err = append(obs.at, row), append(obs.val, o.Shift), append(obs.err, o.SE)
			for j, h := range hs {
				m, ok := h.Predicted[o.Observable]
				if !ok {
					continue
				}
				preds[j].at, preds[j].val, preds[j].err = append(preds[j].at, row), append(preds[j].val, m.Mean), append(preds[j].err, m.SD)
			}
		}
		if len(rows) == 0 {
			continue
		}
		xlabel := "shift, treatment − control (‰)"
		title := "Observed and predicted shifts: " + plain(c.Name)
		if logRatio {
			xlabel = "shift, ln(treatment / control)"
			title = "Pool sizes and fluxes: " + plain(c.Name)
		}
		p, h, err := dotPanel(title, xlabel, rows, append([]series{obs}, preds...))
		if err != nil {
			return nil, err
		}
		f.panels = append(f.panels, p)
		f.heights = append(f.heights, h)
	}
	if len(f.panels) == 0 {
		return nil, fmt.Errorf("no observed shift to draw")
	}
	return f, nil
}
