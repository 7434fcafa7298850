package rank

import (
	"testing"

	"nlens/knowledge"
	"nlens/rank/study"
	"nlens/rules"
)

// DrawBytes for the demo study, by hand: 30 candidates with a magnitude
// in rules/candidates.yaml (31 less none): 20 responses sized as shares
// (logit-uniform) and 10 rates (log-uniform), all on 11 coarse nodes;
// 4 observables, 121 fine points, so 121·(4+1) = 605 fine floats each:
// 30·(605 + 11·4) = 19 470 floats, × 8 bytes × 3 (drawMemoryFactor) =
// 467 280 bytes; 2 GiB / 467 280 bytes = 4 595 draws.
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
	if got, want := DrawBytes(st, set), int64(467280); got != want {
		t.Errorf("DrawBytes = %d, want %d (hand computation)", got, want)
	}
	if got, want := MaxDraws(st, set), 4595; got != want {
		t.Errorf("MaxDraws = %d, want %d (hand computation)", got, want)
	}
}
