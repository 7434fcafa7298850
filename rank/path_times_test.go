package rank

import (
	"slices"
	"testing"
)

func TestWithTime(t *testing.T) {
	for _, tc := range []struct {
		name  string
		times []float64
		t     float64
		want  []float64
	}{
		// 0.1·3 in IEEE 754 double arithmetic is 0.30000000000000004
		// (Python 3.11: 0.1*3), the kind of value an even grid holds.
		{"snapped to the grid", []float64{0, 0.1, 0.2, 0.1 * 3}, 0.3, []float64{0, 0.1, 0.2, 0.3}},
		{"inserted in order", []float64{0, 2, 4}, 3, []float64{0, 2, 3, 4}},
		{"already there", []float64{0, 1, 2}, 1, []float64{0, 1, 2}},
		{"first", []float64{0, 1, 2}, 0, []float64{0, 1, 2}},
		{"beyond the last", []float64{0, 1, 2}, 2.5, []float64{0, 1, 2, 2.5}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := withTime(slices.Clone(tc.times), tc.t); !slices.Equal(got, tc.want) {
				t.Errorf("got %v, want %v", got, tc.want)
			}
		})
	}
}
