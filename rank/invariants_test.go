package rank

import (
	"math"
	"strings"
	"testing"

	"nlens/rules"
)

// checkInvariants holds every result the tests produce to what DESIGN §5
// promises of any result (issue 11): each magnitude's median inside its
// 90 % interval (and each mode's inside its own), the interval inside the
// prior; a pair's id, label and magnitudes in one order; no hypothesis
// whose evidence beats the treatment alone's by mergeEvidenceFactor
// counted with it; posteriors summing to 1.
func checkInvariants(t *testing.T, c *ComparisonResult, set *rules.Set) {
	t.Helper()
	var noneEvidence float64
	var total float64
	for _, h := range c.Hypotheses {
		total += h.Posterior
		if h.ID == rules.None {
			noneEvidence = h.LogEvidence
		}
	}
	if math.Abs(total-1) > 1e-9 {
		t.Errorf("%s: posteriors sum to %.12g", c.Name, total)
	}
	for _, h := range c.Hypotheses {
		for _, m := range h.Magnitudes {
			if !(m.Low <= m.Best && m.Best <= m.High) {
				t.Errorf("%s, %s: median %g outside its interval %g–%g", h.ID, m.Candidate, m.Best, m.Low, m.High)
			}
			if m.Low < m.PriorLow*(1-1e-9) || m.High > m.PriorHigh*(1+1e-9) {
				t.Errorf("%s, %s: interval %g–%g outside the prior %g–%g", h.ID, m.Candidate, m.Low, m.High, m.PriorLow, m.PriorHigh)
			}
			for _, md := range m.Modes {
				if !(md.Low <= md.Best && md.Best <= md.High) {
					t.Errorf("%s, %s: a mode's median %g outside its interval %g–%g", h.ID, m.Candidate, md.Best, md.Low, md.High)
				}
			}
		}
		if d := h.Duration; d != nil && !(d.Low <= d.Best && d.Best <= d.High) {
			t.Errorf("%s: duration median %g outside its interval %g–%g", h.ID, d.Best, d.Low, d.High)
		}
		if h.Indistinguishable && h.ID != rules.None && h.LogEvidence > noneEvidence+math.Log(mergeEvidenceFactor)+1e-9 {
			t.Errorf("%s counted with the treatment alone although its evidence is %.2g times higher", h.ID, math.Exp(h.LogEvidence-noneEvidence))
		}
		if !h.Pair {
			continue
		}
		ids := strings.Split(strings.TrimSuffix(h.ID, pulseSuffix), "+")
		var labels []string
		for _, id := range ids {
			cand := set.Candidate(id)
			if cand == nil {
				t.Errorf("pair %s: unknown part %s", h.ID, id)
				return
			}
			labels = append(labels, cand.Label)
		}
		if want := strings.Join(labels, " + "); !strings.HasPrefix(h.Label, want) {
			t.Errorf("pair %s: label %q, want the parts in the id's order (%q)", h.ID, h.Label, want)
		}
		var mags []string
		for _, m := range h.Magnitudes {
			mags = append(mags, m.Candidate)
		}
		if strings.Join(mags, "+") != strings.Join(ids, "+") {
			t.Errorf("pair %s: magnitudes in the order %v", h.ID, mags)
		}
	}
}
