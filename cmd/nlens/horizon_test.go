package main

import (
	"math"
	"testing"

	"nlens/forward"
	"nlens/knowledge"
)

// simulate --years is capped at maxYears because the matrix exponential's
// error grows with ‖K‖·t. Long after a change has settled, the exact state
// is the new steady state, which forward solves by LU without any
// exponential: the independent reference here. At maxYears every template
// and forward/testdata/stiff.yaml (far stiffer than any template) must
// match it to 1e-5 in each pool (printed to 4 significant digits) and
// 1e-4 ‰ in δ15N (printed to 0.01 ‰). Measured when the bound was set:
// at most 1e-8 (templates) and 9e-7 (stiff.yaml) relative, 3e-6 ‰.
func TestYearsBoundKeepsTheExponentialAccurate(t *testing.T) {
	t.Parallel()
	const relTol, deltaTol = 1e-5, 1e-4
	kb := knowledge.MustDefault()
	sites := append(kb.SiteIDs(), "../../forward/testdata/stiff.yaml")
	change := forward.Sustained([]forward.Knob{forward.Factor("nitrification", 2)})
	years := float64(maxYears)
	for _, id := range sites {
		site, err := forward.LoadSite(id, kb)
		if err != nil {
			t.Fatal(err)
		}
		settled, err := forward.Simulate(site, change, nil)
		if err != nil {
			t.Fatal(err)
		}
		late, err := forward.Simulate(site, change, &years)
		if err != nil {
			t.Fatal(err)
		}
		for i, pool := range site.Pools {
			want := settled.Then.Total(i)
			if want == 0 {
				continue
			}
			if rel := math.Abs(late.Then.Total(i)/want - 1); !(rel <= relTol) {
				t.Errorf("%s: %s pool after %g years is off the steady state by %.2g (relative), more than %g", id, pool, years, rel, relTol)
			}
			if d := math.Abs(late.Then.Delta15(i) - settled.Then.Delta15(i)); !(d <= deltaTol) {
				t.Errorf("%s: %s δ15N after %g years is off the steady state by %.2g ‰, more than %g", id, pool, years, d, deltaTol)
			}
		}
	}
}
