package report

import (
	"bytes"
	"os"
	"strings"
	"testing"

	"nlens/knowledge"
	"nlens/rank"
	"nlens/rank/study"
)

// TestCheckShowsAppliedTreatment: `nlens check` says what the declared
// treatment does in every hypothesis (issue 9): the fire's moves at the
// stated severity with their ranges from knowledge/forcings.yaml, a
// context-only tag marked as such, and a shift from a paper shown without
// invented group levels.
func TestCheckShowsAppliedTreatment(t *testing.T) {
	kb := testKB(t)
	const text = `
title: check test
site: {template: temperate-conifer-forest}
comparisons:
  - name: wildfire vs unburned
    years: 2
    management: [burned, thinned]
    severity: high
    shifts: {foliage: {shift: 2.9, se: 0.6}}
`
	out := checkOutput(t, kb, text)
	m, _ := kb.Management("burned")
	want := []string{"applied in every hypothesis: fire, high severity (burned)", "no site fit", `management "thinned": context for the priors only`}
	for _, mv := range m.Severity["high"].Moves {
		want = append(want, mv.Label+": "+percent(mv.Share.Typical)+" of the "+mv.From+" pool ("+percentRange(mv.Share.Range)+")")
	}
	flat := strings.Join(strings.Fields(out), " ")
	for _, w := range want {
		if !strings.Contains(flat, w) {
			t.Errorf("check output lacks %q:\n%s", w, out)
		}
	}
	if strings.Contains(out, "0.00") {
		t.Errorf("a shift from a paper printed invented group levels:\n%s", out)
	}
}

// Without a stated severity, `nlens check` says what the engine does (the
// draws cover low, moderate and high; rank/draws.go) in the same words as
// the result's treatment record, not that moderate is assumed.
func TestCheckSeverityNotGiven(t *testing.T) {
	kb := testKB(t)
	const text = `
title: check test
site: {template: temperate-conifer-forest}
comparisons:
  - name: wildfire vs unburned
    years: 2
    management: [burned]
    shifts: {foliage: {shift: 2.9, se: 0.6}}
`
	out := checkOutput(t, kb, text)
	flat := strings.Join(strings.Fields(out), " ")
	if !strings.Contains(flat, "fire, "+rank.SeverityNotGiven) || strings.Contains(flat, "assumed") {
		t.Errorf("check output:\n%s", out)
	}
}

// checkOutput is what `nlens check` writes for a study text.
func checkOutput(t *testing.T, kb *knowledge.Base, text string) string {
	t.Helper()
	st, err := study.Parse("study.yaml", []byte(text), kb, study.Options{}, os.ReadFile)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Observed(&buf, st, kb); err != nil {
		t.Fatal(err)
	}
	return buf.String()
}
