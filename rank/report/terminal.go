package report

import (
	"fmt"
	"io"
	"strconv"
	"strings"

	"nlens/knowledge"
	"nlens/rank"
)

// ExplainOptions adds what the renderers need beyond the result.
type ExplainOptions struct {
	// MaxHypotheses shown in tables (the JSON has all).
	MaxHypotheses int
	// MaxMeasurements shown in tables.
	MaxMeasurements int
}

func (o ExplainOptions) withDefaults() ExplainOptions {
	if o.MaxHypotheses <= 0 {
		o.MaxHypotheses = 8
	}
	if o.MaxMeasurements <= 0 {
		o.MaxMeasurements = 6
	}
	return o
}

// Table writes the terminal report of an explain run, readable on an
// 80-column terminal.
func Table(w io.Writer, r *rank.Result, opt ExplainOptions) error {
	opt = opt.withDefaults()
	ew := &errWriter{w: w}
	title := r.StudyTitle
	if title == "" {
		title = r.StudyFile
	}
	ew.printf("%s\nsite model: %s\n", title, r.SiteID)
	for _, s := range noFitStatements(r) {
		ew.printf("\n%s\n", wrap("WARNING: "+s, 78))
	}
	for _, c := range r.Comparisons {
		ew.printf("\n== %s (%s)\n", c.Name, when(c.Years))
		if tw := treatmentWords(c.Treatment); tw != "" {
			ew.printf("%s\n", wrap("treatment applied in every explanation: "+tw, 78))
		}
		ew.printf("\nObserved shifts (treatment − control)\n")
		if err := observedTable(ew, c.Observed); err != nil {
			return err
		}
		if sr, last := seriesOf(r, c); sr != nil {
			// A member of a series: the joint ranking comes once, after
			// the series' last comparison.
			ew.printf("\n%s\n", wrap("Part of "+seriesHeading(sr)+"; the ranking is the series'.", 78))
			for _, wm := range c.Warnings {
				ew.printf("\n%s\n", wrap("warning: "+wm, 78))
			}
			if last {
				ew.printf("\n== %s\n", wrap(seriesHeading(sr), 75))
				if err := rankingTables(ew, seriesAsComparison(r, sr), opt); err != nil {
					return err
				}
			}
			continue
		}
		if err := rankingTables(ew, c, opt); err != nil {
			return err
		}
	}
	ew.printf("\n%s\n", wrap("Cautions: "+strings.Join(shortCautions, " "), 78))
	return ew.err
}

// rankingTables writes a comparison's (or a series') ranking: the
// explanations, predicted shifts, next measurements and warnings.
func rankingTables(ew *errWriter, c rank.ComparisonResult, opt ExplainOptions) error {
	ew.printf("\nExplanations, most probable first\n")
	var rows [][]string
	for i, h := range c.Hypotheses {
		if i >= opt.MaxHypotheses {
			break
		}
		post := posteriorCell(c, h)
		rows = append(rows, []string{strconv.Itoa(i + 1), shortLabel(h), post, MagnitudeText(h), fmtP(h.Fit.P)})
	}
	if err := wrappedTable(ew, []string{"#", "explanation", "posterior", "magnitude (90 %)", "fit p"}, "rlrlr", rows, []int{0, 30, 0, 24, 0}); err != nil {
		return err
	}
	if n := len(c.Hypotheses) - opt.MaxHypotheses; n > 0 {
		ew.printf("(%d more in --format json)\n", n)
	}
	ew.printf("%s\n", wrap(tableLegend(c), 78))
	lead := leadingIndex(c)
	if len(lead) > 0 {
		ew.printf("\nPredicted shifts under the leading explanations (mean ± sd)\n")
		headers, rows := predictionTable(c, lead, 1)
		if err := table(ew, headers, "l"+strings.Repeat("r", len(headers)-1), rows); err != nil {
			return err
		}
	}
	if len(c.Measurements) > 0 {
		ew.printf("\nNext measurements (expected information about which explanation holds;\nwithin %s bit of each other the cheaper first)\n", sigG(rank.BitsTie, 2))
		if c.MeasurementsAt != "" {
			ew.printf("%s\n", wrap(fmt.Sprintf("(as at %s, where a measurement tells most: archived samples of that time, or the same design elsewhere)", quoteName(c.MeasurementsAt)), 78))
		}
		rows = rows[:0]
		for i, m := range c.Measurements {
			if i >= opt.MaxMeasurements {
				break
			}
			rows = append(rows, []string{strconv.Itoa(i + 1), m.Label, fixed(m.Bits, 2), knowledge.CostLabel(m.Cost), m.Method})
		}
		if err := wrappedTable(ew, []string{"#", "measurement", "bits", "cost", "method"}, "rlrll", rows, []int{0, 22, 0, 0, 30}); err != nil {
			return err
		}
		ew.printf("\nPredicted shift of each under the leading explanations (mean ± sd with noise)\n")
		headers, rows := measurementTable(c, lead, opt.MaxMeasurements, true)
		if err := table(ew, headers, "l"+strings.Repeat("r", len(headers)-1), rows); err != nil {
			return err
		}
		ew.printf("(shifts in ‰; pools and fluxes as ln ratio; %d replicates per group assumed)\n", c.ReplicatesAssumed)
	}
	for _, wm := range c.Warnings {
		ew.printf("\n%s\n", wrap("warning: "+wm, 78))
	}
	return nil
}

// tableLegend explains the columns of the explanations table: the
// posterior, the magnitude and "fit p", and "with #k" where it occurs.
func tableLegend(c rank.ComparisonResult) string {
	s := "posterior: probability given the data and priors (all sum to 1); magnitude: median (90 % interval), was = baseline; fit p: probability of a fit at least this poor if the explanation were right (below 0.01 it does not reproduce the data)."
	for _, h := range c.Hypotheses {
		if h.Indistinguishable {
			return s + " with #k: predictions within noise of #k's, so its probability is counted there."
		}
	}
	return s
}

// leadingIndex maps the comparison's leading ids to hypothesis indices.
func leadingIndex(c rank.ComparisonResult) []int {
	var out []int
	for _, id := range c.Leading {
		for i, h := range c.Hypotheses {
			if h.ID == id {
				out = append(out, i)
			}
		}
	}
	return out
}

func shortMeasurement(m rank.Measurement) string {
	return m.ID
}

// predictionTable lays out the observed shifts (± SE) beside each leading
// hypothesis's predicted shift (mean ± sd), with dec decimals for δ values
// and one more for log ratios.
func predictionTable(c rank.ComparisonResult, lead []int, dec int) ([]string, [][]string) {
	headers := []string{"observable", "observed"}
	for _, i := range lead {
		headers = append(headers, "#"+strconv.Itoa(i+1))
	}
	var rows [][]string
	for _, o := range c.Observed {
		d := dec
		if o.LogRatio {
			d++
		}
		row := []string{o.Observable, pm(o.Shift, o.SE, d)}
		for _, i := range lead {
			m := c.Hypotheses[i].Predicted[o.Observable]
			row = append(row, pm(m.Mean, m.SD, d))
		}
		rows = append(rows, row)
	}
	return headers, rows
}

// measurementTable lays out each next measurement's predicted shift (mean
// ± sd with noise) under the leading hypotheses, for at most max rows. A
// compact table gives log ratios a one-decimal sd to fit 80 columns.
func measurementTable(c rank.ComparisonResult, lead []int, max int, compact bool) ([]string, [][]string) {
	headers := []string{"measurement"}
	for _, i := range lead {
		headers = append(headers, "#"+strconv.Itoa(i+1))
	}
	var rows [][]string
	for i, m := range c.Measurements {
		if i >= max {
			break
		}
		row := []string{shortMeasurement(m)}
		for _, hi := range lead {
			p, ok := m.Predicted[c.Hypotheses[hi].ID]
			switch {
			case !ok:
				row = append(row, "")
			case m.Unit == knowledge.UnitLogRatio && compact:
				row = append(row, plusSigned(p.Mean, 2)+"±"+signed(p.SD, 1))
			case m.Unit == knowledge.UnitLogRatio:
				row = append(row, pm(p.Mean, p.SD, 2))
			default:
				row = append(row, pm(p.Mean, p.SD, 1))
			}
		}
		rows = append(rows, row)
	}
	return headers, rows
}
