package rank_test

import (
	"fmt"

	"nlens/rank"
)

// Two equally likely explanations that a noiseless measurement tells apart
// leave exactly one bit to learn (the entropy of a fair coin).
func ExampleInformationGain() {
	bits := rank.InformationGain([]float64{0.5, 0.5}, [][]float64{{0}, {10}}, 1e-3)
	fmt.Printf("%.3f bits\n", bits)
	// Output: 1.000 bits
}
