package report

import (
	"bytes"
	"strings"
	"testing"
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
