package rank

import (
	"math"
	"testing"

	"nlens/knowledge"
	"nlens/rank/study"
)

// The spline carries forward-model predictions from the coarse nodes to the
// fine grid. Against direct forward runs at fine points it must be accurate
// well inside σ_model (0.5 ‰): the tolerance is 0.1 ‰ for single candidates
// and 0.2 ‰ for pairs (a fifth and two fifths of σ_model).
func TestSplineAccuracy(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	set := defaultSet(t)
	st, err := study.Load("../testdata/demo/study.yaml", kb, study.Options{})
	if err != nil {
		t.Fatal(err)
	}
	cmp := &st.Comparisons[0]
	e := &engine{site: st.Site, kb: kb, set: set, cmp: cmp, opt: Options{Seed: 1, Draws: 2, ModelError: DefaultModelError}, ctx: st.ContextFor(cmp, kb)}
	w := newWorker(st.Site)
	if err := e.setup(w, 0); err != nil {
		t.Fatal(err)
	}
	check := func(ids []string, tol float64) {
		var knobs []*knob
		for _, id := range ids {
			k, why := e.compile(set.Candidate(id), len(ids) == 2)
			if k == nil {
				t.Fatal(why)
			}
			knobs = append(knobs, k)
		}
		s := e.evaluate(w, "check", knobs)
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
	for _, id := range []string{"nitrification", "denitrification", "nitrate-leaching", "mineralization", "mycorrhizal-route", "uptake-form", "source:manure"} {
		check([]string{id}, 0.1)
	}
	check([]string{"nitrification", "nitrate-leaching"}, 0.2)
	check([]string{"mineralization", "source:wastewater"}, 0.2)
	check([]string{"uptake-form", "mycorrhizal-route"}, 0.2)
}
