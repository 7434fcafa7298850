package rank

import (
	"context"
	"reflect"
	"testing"

	"nlens/knowledge"
	"nlens/rank/study"
)

// The same study and seed give identical results, whether the work runs on
// one goroutine or several; a different seed changes the nuisance draws.
func TestDeterminism(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	st, err := study.Load("../testdata/demo/study.yaml", kb, study.Options{})
	if err != nil {
		t.Fatal(err)
	}
	run := func(seed uint64, workers int) *Result {
		r, err := Explain(context.Background(), st, kb, defaultSet(t), Options{Seed: seed, Draws: 12, Workers: workers})
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	a, b, c := run(7, 1), run(7, 2), run(7, 2)
	if !reflect.DeepEqual(a, b) || !reflect.DeepEqual(b, c) {
		t.Error("the same seed gave different results (serial vs parallel or between runs)")
	}
	if d := run(8, 2); reflect.DeepEqual(a.Comparisons[0].Hypotheses, d.Comparisons[0].Hypotheses) {
		t.Error("a different seed gave identical posteriors: the draws do not depend on the seed")
	}
	// Several comparisons run side by side: still identical to serial, and
	// each comparison's result does not depend on its neighbours' scheduling.
	many := *st
	many.Comparisons = nil
	for i := range 3 {
		c := st.Comparisons[0]
		c.Name = string(rune('a' + i))
		c.Observed = append([]study.Observed(nil), c.Observed...)
		c.Observed[0].Shift += float64(i)
		many.Comparisons = append(many.Comparisons, c)
	}
	runMany := func(workers int) *Result {
		r, err := Explain(context.Background(), &many, kb, defaultSet(t), Options{Seed: 7, Draws: 12, Workers: workers})
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	if !reflect.DeepEqual(runMany(1), runMany(2)) {
		t.Error("a three-comparison study gave different results on one and two workers")
	}
}

// Posteriors are probabilities: they sum to one over the hypotheses and
// are sorted; magnitudes lie in their priors' ranges.
func TestPosteriorsAreProbabilities(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	st, err := study.Load("../testdata/demo/study.yaml", kb, study.Options{})
	if err != nil {
		t.Fatal(err)
	}
	r, err := Explain(context.Background(), st, kb, defaultSet(t), Options{Seed: 1, Draws: 12})
	if err != nil {
		t.Fatal(err)
	}
	var sum float64
	hs := r.Comparisons[0].Hypotheses
	for i, h := range hs {
		sum += h.Posterior
		if i > 0 && h.Posterior > hs[i-1].Posterior {
			t.Errorf("hypotheses not sorted at %d", i)
		}
		for _, m := range h.Magnitudes {
			if !(m.PriorLow <= m.Low && m.Low <= m.Best && m.Best <= m.High && m.High <= m.PriorHigh) {
				t.Errorf("%s: magnitude %+v: median outside its interval or interval outside the prior", h.ID, m)
			}
		}
	}
	if sum < 1-1e-9 || sum > 1+1e-9 {
		t.Errorf("posteriors sum to %.12f", sum)
	}
	ms := r.Comparisons[0].Measurements
	// sorted by information, cheaper first among those within BitsTie
	// of the best of their run: none is BitsTie above an earlier one
	for i := range ms {
		for j := i + 1; j < len(ms); j++ {
			if ms[j].Bits >= ms[i].Bits+BitsTie {
				t.Errorf("measurement %d (%.3f bits) listed after %d (%.3f bits)", j, ms[j].Bits, i, ms[i].Bits)
			}
		}
	}
}

// With the default adaptive draws, the demo's three leading explanations
// and its first recommended measurement are the same for seeds 1 to 5
// (issue 11): the Monte Carlo error of the posteriors is held below 0.02
// and near-equal measurements are ordered by cost and catalogue, not by
// the last bits of a noisy estimate.
func TestSeedStabilityDemo(t *testing.T) {
	if testing.Short() {
		t.Skip("explains the demo five times with adaptive draws")
	}
	t.Parallel()
	kb := knowledge.MustDefault()
	st, err := study.Load("../testdata/demo/study.yaml", kb, study.Options{})
	if err != nil {
		t.Fatal(err)
	}
	var first []string
	var firstM string
	for seed := uint64(1); seed <= 5; seed++ {
		r, err := Explain(context.Background(), st, kb, defaultSet(t), Options{Seed: seed})
		if err != nil {
			t.Fatal(err)
		}
		c := r.Comparisons[0]
		checkInvariants(t, &c, defaultSet(t))
		var top []string
		for _, h := range c.Hypotheses[:3] {
			top = append(top, h.ID)
		}
		m := ""
		if len(c.Measurements) > 0 {
			m = c.Measurements[0].ID
		}
		t.Logf("seed %d: %v, first measurement %s", seed, top, m)
		if seed == 1 {
			first, firstM = top, m
			continue
		}
		if !reflect.DeepEqual(top, first) || m != firstM {
			t.Errorf("seed %d: top three %v and first measurement %s; seed 1 gave %v and %s", seed, top, m, first, firstM)
		}
	}
}

// Without a site fit, comparisons of one design share forward predictions
// but not their draw weights, which come from each control's levels: a
// comparison's counted-with-none signal is its own, whatever it is
// explained beside (the departure cache is keyed by the levels too).
func TestSharedDesignKeepsOwnWeights(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	st, err := study.Load("../testdata/demo/study.yaml", kb, study.Options{})
	if err != nil {
		t.Fatal(err)
	}
	shifted := st.Comparisons[0]
	shifted.Name = "shifted controls"
	shifted.Observed = append([]study.Observed(nil), shifted.Observed...)
	for k := range shifted.Observed {
		if shifted.Observed[k].NoLevels() {
			t.Fatal("the demo's observations have no group levels: the test needs them")
		}
		shifted.Observed[k].Control.Mean += 1.5
		shifted.Observed[k].Treatment.Mean += 1.5
	}
	opt := Options{Seed: 3, Draws: 12, FixedDraws: true, Workers: 1, NoSiteFit: true}
	both := *st
	both.Comparisons = []study.Comparison{st.Comparisons[0], shifted}
	alone := *st
	alone.Comparisons = []study.Comparison{shifted}
	rb, err := Explain(context.Background(), &both, kb, defaultSet(t), opt)
	if err != nil {
		t.Fatal(err)
	}
	ra, err := Explain(context.Background(), &alone, kb, defaultSet(t), opt)
	if err != nil {
		t.Fatal(err)
	}
	signal := func(c ComparisonResult) map[string]float64 {
		m := map[string]float64{}
		for _, h := range c.Hypotheses {
			m[h.ID] = h.MaxSignal
		}
		return m
	}
	if got, want := signal(rb.Comparisons[1]), signal(ra.Comparisons[0]); !reflect.DeepEqual(got, want) {
		t.Error("the shifted comparison's signals depend on the comparison explained beside it")
	}
}
