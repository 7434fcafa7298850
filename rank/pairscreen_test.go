package rank

import (
	"context"
	"slices"
	"strings"
	"testing"

	"nlens/knowledge"
)

// Pairs whose parts together explain what neither does alone are listed
// by the joint screen. On the cropland template under ammonium nitrate
// (33 kg N/ha/yr, 5 years), noise-free, with the five observables of
// obsRich: more denitrification (0.5 of the NO3− outflow, 0.06 at
// baseline) with more immobilization (0.4 of the NH4+ outflow, 0.10), and
// more nitrification (0.85, 0.55) with more nitrate leaching (0.7, 0.32).
// The magnitudes are our choice, within the candidates' priors. Without
// the joint screen neither pair was scored at all (checked by hand when
// the screen was added, over 60 pairs of this design: the screen put 6
// more true pairs on the list, the first of these at rank 1 with 0.27).
func TestPairScreenFindsHiddenPair(t *testing.T) {
	kb := knowledge.MustDefault()
	for _, tc := range []struct {
		a, b   string
		va, vb float64
	}{
		{"more-denitrification", "more-immobilization", 0.5, 0.4},
		{"more-nitrification", "more-nitrate-leaching", 0.85, 0.7},
	} {
		tr := truth{name: "hidden pair", site: "fertilized-cropland", years: years(5), treatment: add("ammonium-nitrate", 33),
			response: tc.a, value: tc.va, response2: tc.b, value2: tc.vb, obs: obsRich, noiseFree: true}
		st := synthesize(t, kb, tr, 1)
		res, err := Explain(context.Background(), st, kb, defaultSet(t), testOptions)
		if err != nil {
			t.Fatal(err)
		}
		c := res.Comparisons[0]
		checkInvariants(t, &c, defaultSet(t))
		want := tc.a + "+" + tc.b
		r := rankOf(&c, want)
		if r < 0 || r > 2 {
			t.Errorf("%s ranked %d, want in the top three (top: %s %.2f)", want, r+1, c.Hypotheses[0].ID, c.Hypotheses[0].Posterior)
			continue
		}
		t.Logf("%s ranked %d (%.2f)", want, r+1, c.Hypotheses[r].Posterior)
	}
}

// A pair or pulse that keeps a leading posterior's Monte Carlo error above
// target at the most draws gets more draws (issue 11: the top posteriors'
// error below 0.02 unless the bound stops the draws). Pairs use pairDraws
// draws, so before this a leading pair's error stayed where its 16 draws
// put it and the run ended at the cap with a warning (three of eight
// published cases written as studies). By hand, 384 draws, pairs scored on
// 16: posteriors 0.5 (a single, relVar 0.0004), 0.3 (pair A, relVar 0.05)
// and 0.2 (pair B, relVar 0.001). The single's variance is
// 0.5²·(0.5²·0.0004 + 0.3²·0.05 + 0.2²·0.001) = 0.00116, above 0.02² =
// 0.0004; A's share 0.5²·0.3²·0.05 = 0.001125 falls by 3/4 at 64 draws,
// leaving 0.000316, so A gets 64. A's own variance then,
// 0.3²·0.7²·0.05·16/64 + 0.3²·0.5²·0.0004 + 0.3²·0.2²·0.001 = 0.000564,
// is still above target, but it is A's own, already given more: B's gain
// (3/4 of 0.0000036) is below a quarter of the excess, so B gets none.
// Scored again at 64 draws (A's relVar 0.05/4), A's own variance
// 0.000551 + 0.000013 is above target and A gets 128 (maxLeadDraws; its
// gain 0.000276 is above a quarter of the excess 0.000164).
func TestLeadPairsMarksWhatKeepsTheErrorUp(t *testing.T) {
	two := []*knob{{}, {}}
	one := []*knob{{}}
	e := &engine{draws: make([]draw, 384), opt: Options{Draws: 48, MaxDraws: DefaultMaxDraws}}
	sc := &scoring{
		sorted: []entry{{s: &scored{knobs: one, nd: 384, relVar: 0.0004}}, {s: &scored{knobs: two, nd: 16, relVar: 0.05}}, {s: &scored{knobs: two, nd: 16, relVar: 0.001}}},
		joint:  []Hypothesis{{ID: "single", Posterior: 0.5}, {ID: "a+b", Posterior: 0.3, Pair: true}, {ID: "c+d", Posterior: 0.2, Pair: true}},
	}
	if !e.leadPairs(sc) {
		t.Fatal("nothing marked")
	}
	if e.lead["a+b"] != 64 || e.lead["c+d"] != 0 || e.lead["single"] != 0 {
		t.Errorf("marked %v, want a+b at 64 only", e.lead)
	}
	if got := e.drawsFor("a+b", two); got != 64 {
		t.Errorf("a marked pair uses %d draws, want 64", got)
	}
	if got := e.drawsFor("c+d", two); got != pairDraws {
		t.Errorf("an unmarked pair uses %d draws, want %d", got, pairDraws)
	}
	// Not scored again: nothing new.
	if e.leadPairs(sc) {
		t.Errorf("marked again before scoring: %v", e.lead)
	}
	// Scored again on 64 draws.
	sc.sorted[1].s.nd, sc.sorted[1].s.relVar = 64, 0.05/4
	if !e.leadPairs(sc) || e.lead["a+b"] != maxLeadDraws || e.lead["c+d"] != 0 {
		t.Errorf("after scoring on 64: %v, want a+b at %d only", e.lead, maxLeadDraws)
	}
}

// End to end: a noise-free pair truth on the cropland template leads.
// With pairs held at 16 draws the second of the top three ended at 0.051
// (measured by disabling leadPairs); with more draws for the pairs that
// keep the error up, each of the top three is within 0.04 (a regression
// bound from the measured 0.024–0.032 at 128 draws for pairs), and any
// error above target carries the bound's warning.
func TestLeadingPairReachesTarget(t *testing.T) {
	if testing.Short() {
		t.Skip("adaptive draws up to the cap")
	}
	kb := knowledge.MustDefault()
	tr := truth{name: "leading pair", site: "fertilized-cropland", years: years(5), treatment: add("ammonium-nitrate", 33),
		response: "more-denitrification", value: 0.5, response2: "more-immobilization", value2: 0.4, obs: obsRich, noiseFree: true}
	st := synthesize(t, kb, tr, 1)
	res, err := Explain(context.Background(), st, kb, defaultSet(t), Options{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	c := res.Comparisons[0]
	checkInvariants(t, &c, defaultSet(t))
	warned := slices.ContainsFunc(c.Warnings, func(w string) bool { return strings.Contains(w, "Monte Carlo error") })
	pairs := 0
	for _, h := range c.Hypotheses[:mcseTop] {
		t.Logf("%s %.3f ± %.4f", h.ID, h.Posterior, h.PosteriorMCSE)
		if h.Pair {
			pairs++
		}
		if h.PosteriorMCSE > 0.04 || (h.PosteriorMCSE > mcseTarget && !warned) {
			t.Errorf("%s: Monte Carlo error %.4f (target %.2f, warned %v)", h.ID, h.PosteriorMCSE, mcseTarget, warned)
		}
	}
	if pairs == 0 {
		t.Error("no pair among the top three: the test no longer exercises a leading pair")
	}
}
