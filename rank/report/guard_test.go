package report

import (
	"errors"
	"math"
	"testing"

	"nlens/rank"
)

// CheckFinite names the first non-finite quantity by its path; the paths
// below were written by hand from the field names.
func TestCheckFinite(t *testing.T) {
	t.Parallel()
	type inner struct {
		Mean, SD float64
	}
	type node struct {
		Next  *node
		Value float64
	}
	type doc struct {
		Name        string
		Shifts      map[string]inner
		Items       []inner
		NoiseSD     float64
		Any         any
		Complex     complex128
		private     float64
		RateKgPerHa [2]float32
		Head        *node
		Labels      []string
	}
	nan, inf := math.NaN(), math.Inf(1)
	cyclic := &node{Value: 1}
	cyclic.Next = cyclic
	tests := []struct {
		name     string
		v        any
		path     string
		infinite bool
	}{
		{"all finite", doc{Items: []inner{{1, 2}}, Shifts: map[string]inner{"a": {3, 4}}, Head: cyclic, private: nan}, "", false},
		{"slice element field", doc{Items: []inner{{1, 2}, {3, inf}}}, "items[1].sd", true},
		{"map value, keys in order", doc{Shifts: map[string]inner{"soil": {nan, 0}, "foliage": {0, nan}}}, `shifts["foliage"].sd`, false},
		{"acronym in a name", doc{NoiseSD: -inf}, "noise_sd", true},
		{"inside an interface", doc{Any: map[int]float64{2: nan}}, `any["2"]`, false},
		{"imaginary part", doc{Complex: complex(0, inf)}, "complex", true},
		{"array of float32", doc{RateKgPerHa: [2]float32{1, float32(inf)}}, "rate_kg_per_ha[1]", true},
		{"through pointers", doc{Head: &node{Next: &node{Value: nan}}}, "head.next.value", false},
		{"a bare number", nan, "", false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			err := CheckFinite(tt.v)
			var ne *NonFiniteError
			switch {
			case tt.name == "all finite":
				if err != nil {
					t.Fatalf("got %v, want nil", err)
				}
				return
			case !errors.As(err, &ne):
				t.Fatalf("got %v, want a *NonFiniteError", err)
			}
			if ne.Path != tt.path || math.IsInf(ne.Value, 0) != tt.infinite {
				t.Errorf("got %q (%v), want %q", ne.Path, ne.Value, tt.path)
			}
		})
	}
}

// The message says which quantity, its value and why (exact text written
// from the rule in guard.go).
func TestNonFiniteErrorText(t *testing.T) {
	t.Parallel()
	r := &rank.Result{Comparisons: []rank.ComparisonResult{{Hypotheses: []rank.Hypothesis{{}, {Posterior: math.NaN()}}}}}
	want := "comparisons[0].hypotheses[1].posterior is NaN, not a number: the computation met an undefined operation such as 0/0 or ∞ − ∞"
	if err := CheckFinite(r); err == nil || err.Error() != want {
		t.Errorf("got %v\nwant %s", err, want)
	}
	r.Comparisons[0].Hypotheses[1].Posterior = 0.5
	r.Comparisons[0].Hypotheses[0].LogEvidence = math.Inf(-1)
	want = "comparisons[0].hypotheses[0].log_evidence is -Inf, beyond the floating-point range of ±1.8e308"
	if err := CheckFinite(r); err == nil || err.Error() != want {
		t.Errorf("got %v\nwant %s", err, want)
	}
}

// snakeCase follows the Go naming of initialisms.
func TestSnakeCase(t *testing.T) {
	t.Parallel()
	for in, want := range map[string]string{
		"Posterior": "posterior", "LogEvidence": "log_evidence", "NoiseSD": "noise_sd",
		"N14": "n14", "RateKgPerHaYr": "rate_kg_per_ha_yr", "HTTPServer": "http_server", "DOF": "dof",
	} {
		if got := snakeCase(in); got != want {
			t.Errorf("snakeCase(%q) = %q, want %q", in, got, want)
		}
	}
}
