package rank

import (
	"testing"

	"nlens/knowledge"
	"nlens/rank/study"
	"nlens/rules"
)

// DrawBytes for the demo study, by hand: 14 single candidates with a knob
// (15 in rules/candidates.yaml, less none), 3 observables, 121 fine
// points; 13 log-uniform candidates with 11 coarse nodes and the uniform
// uptake-form with 21: 13·(121·4 + 11·3) + (121·4 + 21·3) = 7268 floats,
// × 8 bytes × 3 (drawMemoryFactor) = 174 432 bytes; 2 GiB / 174 432 bytes
// = 12 311 draws.
func TestDrawBytesDemo(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	st, err := study.Load("../testdata/demo/study.yaml", kb, study.Options{})
	if err != nil {
		t.Fatal(err)
	}
	set, err := rules.Default(kb)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := DrawBytes(st, set), int64(174432); got != want {
		t.Errorf("DrawBytes = %d, want %d (hand computation)", got, want)
	}
	if got, want := MaxDraws(st, set), 12311; got != want {
		t.Errorf("MaxDraws = %d, want %d (hand computation)", got, want)
	}
}
