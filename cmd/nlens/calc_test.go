package main

import (
	"encoding/json"
	"math"
	"strings"
	"testing"
)

// nlens calc answers the FACTS.md worked values through the command line,
// each printed with its formula and source.
func TestCalcCommands(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name   string
		args   []string
		result string  // result name to check
		want   float64 // expected value
		tol    float64
		source string // reference that must be printed
	}{
		// FACTS.md §5.1: δ0 = +5, ε = 15, f = 0.2 gives +29.190 ‰ (Mariotti et al. 1981 form).
		{"rayleigh", []string{"calc", "rayleigh", "--d0", "5", "--epsilon", "15", "--f", "0.2"}, "residual δs (exact)", 29.190, 1e-3, "Mariotti"},
		// FACTS.md §5.1 inverse: δs = 13.684 with ε = 20 gives f = 0.500.
		{"rayleigh inverse", []string{"calc", "rayleigh", "--epsilon", "20", "--ds", "13.684"}, "f remaining (exact)", 0.5, 1e-3, "Mariotti"},
		// FACTS.md §5.2 row 1: δin = 0, ε = 10, F = 0.6 gives 5.976 ‰.
		{"open", []string{"calc", "open", "--din", "0", "--epsilon", "10", "--consumed", "0.6"}, "substrate δs (exact)", 5.976, 1e-3, "Hayes"},
		// FACTS.md §5.4: sources 0 and 10 ‰, mixture 4 ‰, SE 0.5 each: f_A = 0.600, SE 0.0616.
		{"mix", []string{"calc", "mix", "--source", "A=0:0.5", "--source", "B=10:0.5", "--mixture", "4:0.5"}, "fraction A", 0.6, 1e-9, "Phillips"},
		// FACTS.md §5.3: δTB 5, δI 0, εG 15 (−15 in Houlton & Bai's signs), εL 0: f_gas = 1/3.
		{"gas-loss", []string{"calc", "gas-loss", "--soil", "5", "--inputs", "0", "--eps-gas", "15", "--eps-leach", "0"}, "f_gas", 1.0 / 3, 1e-9, "Houlton"},
		// FACTS.md §5.6: δ = +10 ‰ is 0.3699498 atom % with R_std = 1/272; with R_AIR = 0.0036765 the 7th digit differs by 3e-6.
		{"convert", []string{"calc", "convert", "--d15n", "10"}, "atom %", 0.36995, 1e-5, "Junk"},
		// FACTS.md §5.6: δref +6, δlegume +1, B −1 gives 71.43 %.
		{"ndfa", []string{"calc", "ndfa", "--reference", "6", "--legume", "1", "--b", "-1"}, "%Ndfa", 71.43, 0.005, "Shearer"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			out, errs, code := runArgs(t, append(tt.args, "--format", "json")...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			var a struct {
				Formula []string `json:"formula"`
				Source  string   `json:"source"`
				Results []struct {
					Name  string   `json:"name"`
					Value *float64 `json:"value"`
				} `json:"results"`
			}
			if err := json.Unmarshal([]byte(out), &a); err != nil {
				t.Fatal(err)
			}
			if len(a.Formula) == 0 || !strings.Contains(a.Source, tt.source) {
				t.Errorf("formula %v, source %q: want a formula and %q", a.Formula, a.Source, tt.source)
			}
			found := false
			for _, r := range a.Results {
				if r.Name == tt.result && r.Value != nil {
					found = true
					if math.Abs(*r.Value-tt.want) > tt.tol {
						t.Errorf("%s: got %.6f, want %.6f", r.Name, *r.Value, tt.want)
					}
				}
			}
			if !found {
				t.Errorf("no result %q in %s", tt.result, out)
			}
		})
	}
	if _, errs, code := runArgs(t, "calc", "rayleigh", "--epsilon", "20", "--f", "1.5"); code != 1 || errs == "" {
		t.Errorf("f = 1.5: exit %d, stderr %q; want exit 1 with a message", code, errs)
	}
}
