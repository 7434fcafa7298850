package forward_test

import (
	"fmt"

	"nlens/forward"
	"nlens/knowledge"
)

// A closed-system Rayleigh calculation: denitrification (ε = 15 ‰) leaves
// 20 % of nitrate that started at +5 ‰ (FACTS.md §5.1: +29.190 ‰).
func ExampleRayleighResidual() {
	fmt.Printf("%.3f ‰\n", forward.RayleighResidual(5, 15, 0.2))
	// Output: 29.190 ‰
}

// Simulate a change on a built-in site template: the nitrate δ15N five
// years after denitrification comes to take 30 % of the nitrate pool's
// outflow (a regression pin of the model).
func ExampleSimulate() {
	kb := knowledge.MustDefault()
	site, err := forward.LoadSite("temperate-deciduous-forest", kb)
	if err != nil {
		panic(err)
	}
	years := 5.0
	sim, err := forward.Simulate(site, forward.Sustained([]forward.Knob{{Kind: forward.KnobShare, Processes: []string{"denitrification"}, Value: 0.3}}), &years)
	if err != nil {
		panic(err)
	}
	o, _ := site.Observable("soil-nitrate")
	before, after := o.Value(&sim.Baseline, &sim.Base), o.Value(&sim.Then, &sim.Changed)
	fmt.Printf("soil nitrate %+.2f ‰ → %+.2f ‰\n", before, after)
	// Output: soil nitrate -8.62 ‰ → -5.17 ‰
}
