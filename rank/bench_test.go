package rank

import (
	"context"
	"fmt"
	"testing"

	"nlens/knowledge"
	"nlens/rank/study"
	"nlens/rules"
)

func benchSetup(b *testing.B) (*knowledge.Base, *rules.Set, *study.Study) {
	b.Helper()
	kb := knowledge.MustDefault()
	set, err := rules.Default(kb)
	if err != nil {
		b.Fatal(err)
	}
	st, err := study.Load("../testdata/demo/study.yaml", kb, study.Options{})
	if err != nil {
		b.Fatal(err)
	}
	return kb, set, st
}

// BenchmarkExplainDemo: the whole explanation of the demo study (one
// comparison, 3 years after the treatment: transient solves) on all cores.
func BenchmarkExplainDemo(b *testing.B) {
	kb, set, st := benchSetup(b)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Explain(context.Background(), st, kb, set, Options{Seed: 1}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkExplain48: a study of 48 comparisons (the demo's, with shifts
// varied), on all cores (Workers = GOMAXPROCS) and on one.
func BenchmarkExplain48(b *testing.B) {
	kb, set, st := benchSetup(b)
	many := *st
	many.Comparisons = nil
	for i := range 48 {
		c := st.Comparisons[0]
		c.Name = fmt.Sprintf("plot pair %d", i+1)
		c.Observed = append([]study.Observed(nil), c.Observed...)
		for k := range c.Observed {
			c.Observed[k].Shift *= 0.5 + float64(i%8)/8
		}
		many.Comparisons = append(many.Comparisons, c)
	}
	for _, workers := range []int{0, 1} {
		b.Run(fmt.Sprintf("workers=%d", workers), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := Explain(context.Background(), &many, kb, set, Options{Seed: 1, Workers: workers}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkEvidenceOneCandidate: the evidence of one single candidate
// (11 magnitude nodes × 48 draws of forward runs, splines, likelihood).
func BenchmarkEvidenceOneCandidate(b *testing.B) {
	kb, set, st := benchSetup(b)
	e, err := newEngine(st, unit{idx: []int{0}}, kb, set, Options{Seed: 1, Draws: DefaultDraws, ModelError: DefaultModelError})
	if err != nil {
		b.Fatal(err)
	}
	w := newWorker(e.site)
	k, why := e.compile(set.Candidate("more-denitrification"), false)
	if k == nil {
		b.Fatal(why)
	}
	knobs := []*knob{k}
	b.ReportAllocs()
	for b.Loop() {
		e.evaluate(w, "more-denitrification", knobs, nil)
	}
}
