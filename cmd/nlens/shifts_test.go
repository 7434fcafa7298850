package main

import (
	"strings"
	"testing"
)

// shiftsStudy gives shifts as a paper reports them (shift ± SE, no group
// levels): foliar +2.9 ‰ two years after a high-severity wildfire, as in
// Stephan et al. (2015, PLoS ONE 10:e0119560; SE assumed here).
const shiftsStudy = `title: wildfire shifts from a paper
site: {template: temperate-conifer-forest}
comparisons:
  - name: wildfire vs unburned
    years: 2
    management: [burned]
    severity: high
    shifts: {foliage: {shift: 2.9, se: 0.6}}
`

// TestExplainShiftsFromPaper: a comparison given as shifts runs through
// every format (an infinite degrees-of-freedom value once stopped it at the
// non-finite guard) and says that no control levels were available.
func TestExplainShiftsFromPaper(t *testing.T) {
	study := writeReportStudy(t, shiftsStudy)
	for _, format := range []string{"table", "json", "markdown", "text"} {
		code, out, errOut := runReport(t, append([]string{"explain", study, "--format", format}, reportFlags...)...)
		if code != 0 {
			t.Fatalf("%s: exit %d: %s", format, code, errOut)
		}
		if strings.Contains(out, "NaN") || strings.Contains(out, "Inf") {
			t.Errorf("%s: non-finite value printed", format)
		}
	}
	code, out, errOut := runReport(t, "check", study)
	if code != 0 {
		t.Fatalf("check: exit %d: %s", code, errOut)
	}
	if !strings.Contains(out, "no group levels") || !strings.Contains(out, "fire, high severity") {
		t.Errorf("check does not say the shifts came without levels or what fire was applied:\n%s", out)
	}
}
