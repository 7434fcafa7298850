package report

import (
	"nlens/rank"
)

// seriesOf returns the series a comparison belongs to (nil when none) and
// whether the comparison is the series' last member, after which the
// joint ranking is written once (DESIGN §6).
func seriesOf(r *rank.Result, c rank.ComparisonResult) (sr *rank.SeriesResult, last bool) {
	if c.Series == "" {
		return nil, false
	}
	for i := range r.Series {
		if s := &r.Series[i]; s.Name == c.Series {
			return s, len(s.Comparisons) > 0 && s.Comparisons[len(s.Comparisons)-1] == c.Name
		}
	}
	return nil, false
}

// seriesAsComparison presents a series' joint result in the shape of one
// comparison, so that the ranking, prediction and measurement tables are
// written by the same code: the members' observed shifts are named
// "member/observable", the keys of the joint predictions.
func seriesAsComparison(r *rank.Result, sr *rank.SeriesResult) rank.ComparisonResult {
	out := rank.ComparisonResult{Name: sr.Name, Series: sr.Name, Hypotheses: sr.Hypotheses, Measurements: sr.Measurements,
		Leading: sr.Leading, Warnings: sr.Warnings, NoFit: sr.NoFit, MeasurementsAt: sr.MeasurementsAt}
	for _, c := range r.Comparisons {
		if c.Series != sr.Name {
			continue
		}
		out.Treatment, out.ReplicatesAssumed, out.RuledOut = c.Treatment, c.ReplicatesAssumed, c.RuledOut
		for _, o := range c.Observed {
			o.Observable = c.Name + "/" + o.Observable
			out.Observed = append(out.Observed, o)
		}
	}
	return out
}

// seriesHeading names a series and its members.
func seriesHeading(sr *rank.SeriesResult) string {
	kind := "repeated years of one treatment"
	if sr.Kind == "dose" {
		kind = "dose levels of one addition, the response scaled with the rate added"
	}
	return "series " + quoteName(sr.Name) + " (" + kind + "): " + rank.JoinAnd(sr.Comparisons) + ", explained jointly"
}
