package report

import (
	"bytes"
	"strings"
	"testing"

	"nlens/rank"
	"nlens/rank/study"
)

// TestSeriesRankedOnce: the comparisons of a series report their own
// observed shifts, and the joint ranking is written once, after the last
// member, in the terminal table and in Markdown (issue 10: "the series
// reports the joint ranking once").
func TestSeriesRankedOnce(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	r := studyResult(t, "series")
	if len(r.Series) == 0 {
		t.Fatal("no series in the result")
	}
	sr := r.Series[0]
	var tb, md bytes.Buffer
	if err := Table(&tb, r, ExplainOptions{}); err != nil {
		t.Fatal(err)
	}
	if err := Markdown(&md, r, testKB(t), MarkdownOptions{}); err != nil {
		t.Fatal(err)
	}
	for name, out := range map[string]string{"table": tb.String(), "markdown": md.String()} {
		heading := map[string]string{"table": "Explanations, most probable first", "markdown": "### Explanations"}[name]
		members := 0
		for _, c := range r.Comparisons {
			if c.Series == sr.Name {
				members++
			}
		}
		nonSeries := len(r.Comparisons) - members
		if got := strings.Count(out, heading); got != nonSeries+1 {
			t.Errorf("%s: %d rankings for %d comparisons outside the series and one series", name, got, nonSeries)
		}
		// every member's observations come before the series' ranking
		last := strings.LastIndex(out, sr.Comparisons[len(sr.Comparisons)-1])
		if i := strings.Index(out, "series "+quoteName(sr.Name)); i < 0 || i > last {
			t.Errorf("%s: series heading missing or before its members", name)
		}
		for _, c := range sr.Comparisons {
			if !strings.Contains(out, c+"/") {
				t.Errorf("%s: joint predictions lack %s's observables", name, c)
			}
		}
	}
}

// A series whose comparisons measured different observables says at which
// years each shift was seen (foliage at 2, 4 and 10 years, the forest
// floor at 3, as in the clear-cut of Pardo et al. 2002), not one list of
// years for all.
func TestSeriesPatternYearsPerObservable(t *testing.T) {
	t.Parallel()
	y := func(v float64) *float64 { return &v }
	tr := rank.Treatment{Management: []rank.AppliedManagement{{Tag: "clear-cut", Label: "clear-cut harvest"}}}
	obs := func(name string, shift float64) []study.Observed {
		return []study.Observed{{Observable: name, Shift: shift, SE: 0.5}}
	}
	// +2.9 (foliage, 2 years) and +1.3 (forest floor, 3 years) are Pardo et
	// al. 2002's foliar and Oie shifts (confirmed, FACTS-2 §10 case 1);
	// +1.2 and −0.1 are invented. The expected text echoes these inputs.
	u := summaryUnit{series: "harvest", comparisons: []rank.ComparisonResult{
		{Name: "cut 2 y", Years: y(2), Treatment: tr, Observed: obs("foliage", 2.9)},
		{Name: "cut 3 y", Years: y(3), Treatment: tr, Observed: obs("forest-floor", 1.3)},
		{Name: "cut 4 y", Years: y(4), Treatment: tr, Observed: obs("foliage", 1.2)},
		{Name: "cut 10 y", Years: y(10), Treatment: tr, Observed: obs("foliage", -0.1)},
	}}
	got := seriesPattern(u).text
	for _, want := range []string{"(+2.9, +1.2 and -0.1 ‰ at two, four and ten years)", "(+1.3 ‰ at three years)", "after the clear-cut harvest"} {
		if !strings.Contains(got, want) {
			t.Errorf("pattern %q lacks %q", got, want)
		}
	}
}

// The e-mail and the discussion of a series say in which comparison's
// samples the recommended measurement was scored.
func TestSeriesMeasurementSaysWhere(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	r := studyResult(t, "series")
	sr := r.Series[0]
	if sr.MeasurementsAt == "" || len(sr.Measurements) == 0 {
		t.Fatal("series without measurements or the comparison they were scored at")
	}
	want := "in the samples of " + quoteName(sr.MeasurementsAt)
	for _, format := range []string{"text", "markdown"} {
		if out := render(t, r, format); !strings.Contains(strings.Join(strings.Fields(out), " "), want) {
			t.Errorf("%s does not say %q", format, want)
		}
	}
}
