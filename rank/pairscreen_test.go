package rank

import (
	"context"
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
