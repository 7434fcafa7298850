package rank

import (
	"math"
	"strings"
	"testing"

	"nlens/knowledge"
	"nlens/rank/study"
	"nlens/rules"
)

// The spline carries forward-model predictions from the coarse nodes to the
// fine grid. Against direct forward runs at fine points it must be accurate
// well inside σ_model (0.5 ‰): the tolerance is 0.1 ‰ for single candidates
// and 0.2 ‰ for pairs (a fifth and two fifths of σ_model).
func TestSplineAccuracy(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	demo, err := study.Load("../testdata/demo/study.yaml", kb, study.Options{})
	if err != nil {
		t.Fatal(err)
	}
	// Sites where shares run close to 1 (a fertilized cropland nitrifies
	// most of its NH4+) and a clear-cut's transient.
	crop := synthesize(t, kb, truth{site: "fertilized-cropland", years: years(5), treatment: add("urea", 100), obs: obsRich, noiseFree: true}, 1)
	cut := synthesize(t, kb, truth{site: "temperate-deciduous-forest", years: years(3), treatment: manage("clear-cut"), obs: obsRich, noiseFree: true}, 1)
	for name, st := range map[string]*study.Study{"demo": demo, "cropland": crop, "clear-cut": cut} {
		t.Run(name, func(t *testing.T) { splineAccuracy(t, kb, st) })
	}
}

func splineAccuracy(t *testing.T, kb *knowledge.Base, st *study.Study) {
	set := defaultSet(t)
	e, err := newEngine(st, unit{idx: []int{0}}, kb, set, Options{Seed: 1, Draws: 2, ModelError: DefaultModelError})
	if err != nil {
		t.Fatal(err)
	}
	w := newWorker(e.site)
	check := func(ids []string, tol float64) {
		var knobs []*knob
		for _, id := range ids {
			k, why := e.compile(set.Candidate(id), len(ids) == 2)
			if k == nil {
				t.Logf("%v not tested here: %s", ids, why)
				return
			}
			knobs = append(knobs, k)
		}
		s := e.evaluate(w, strings.Join(ids, "+"), knobs, nil) // a fresh id: evaluate caches by id
		got := make([]float64, len(e.obs))
		theta := make([]float64, len(knobs))
		var worst float64
		nF := s.fineCount()
		for f := 0; f < nF; f += 7 {
			theta = s.fineTheta(f, theta)
			e.predict(w, 0, knobs, theta, got)
			for o := range got {
				worst = math.Max(worst, math.Abs(got[o]-s.pred[(f*s.nd+0)*s.no+o]))
			}
		}
		t.Logf("%v: worst spline error %.3g ‰", ids, worst)
		if worst > tol {
			t.Errorf("%v: spline error %.3g ‰ exceeds %g ‰", ids, worst, tol)
		}
	}
	for _, id := range []string{"more-nitrification", "less-nitrification", "more-denitrification", "more-nitrate-leaching", "less-mineralization", "less-mycorrhizal-route", "more-fungal-transfer", "more-nitrate-uptake", "less-nitrate-uptake", "more-plant-uptake", "less-plant-uptake", "more-volatilization", "more-fixation", "source:deposition"} {
		check([]string{id}, 0.1)
	}
	check([]string{"more-nitrification", "more-nitrate-leaching"}, 0.2)
	check([]string{"less-mineralization", "source:deposition"}, 0.2)
	check([]string{"more-nitrate-uptake", "less-mycorrhizal-route"}, 0.2)
}

// A marginal with two separated bumps is reported as two modes, each with
// its median inside its own interval; a single bump is one mode. The
// marginals are constructed here (invented shapes).
func TestModes(t *testing.T) {
	t.Parallel()
	ax := newAxis(rules.PriorLogitUniform, 0.01, 0.95, 15, 121)
	bump := func(c, w float64) []float64 {
		m := make([]float64, 121)
		for i := range m {
			x := float64(i)
			m[i] = math.Exp(-0.5 * (x - c) * (x - c) / (w * w))
		}
		return m
	}
	one := bump(60, 8)
	if got := modes(one, &ax); got != nil {
		t.Errorf("one bump gave %d modes", len(got))
	}
	two := bump(25, 5)
	for i, v := range bump(95, 6) {
		two[i] += v
	}
	got := modes(two, &ax)
	if len(got) != 2 {
		t.Fatalf("two bumps gave %d modes", len(got))
	}
	// Hand computation: a Gaussian bump of width w sums to about w·√(2π)
	// grid points, so the two bumps hold 5/11 ≈ 0.45 and 6/11 ≈ 0.55 of the
	// mass; 0.3 is a floor well below either.
	for _, m := range got {
		if !(m.Low <= m.Best && m.Best <= m.High) || m.Mass < 0.3 {
			t.Errorf("mode %+v", m)
		}
	}
	if !(got[0].High < got[1].Low) {
		t.Errorf("modes overlap: %+v", got)
	}
}
