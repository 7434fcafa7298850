package study

import (
	"fmt"
	"math"
	"testing"
)

// Atom % values of nitrogen reference materials convert to their δ15N
// within 1e-6 ‰. The δ values are FACTS.md §3: IAEA-N-1 +0.43 ‰ (IAEA
// reference material page; CIAAW), USGS25 −30.41 ‰ (CIAAW), USGS32 +180 ‰
// (CIAAW). Their atom % were computed independently with GNU bc 1.07.1
// (scale=30) from R = 0.0036765·(1 + δ/1000), atom % = 100·R/(1 + R), and
// written to 15 significant digits.
func TestAtomPercentReferenceMaterials(t *testing.T) {
	t.Parallel()
	site := testSite(t)
	tests := []struct {
		name        string
		atomPercent string
		delta       float64
	}{
		{"IAEA-N-1", "0.366460219169097", 0.43},
		{"USGS25", "0.355203570173459", -30.41},
		{"USGS32", "0.431953070950886", 180},
	}
	// 1e-6 ‰ is the tolerance issue 14 asks for; the 15-digit atom % carry
	// an error of at most 5e-16 atom %, about 1.4e-12 ‰.
	const tol = 1e-6
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			for _, unitCol := range []bool{true, false} {
				csv := "sample,group,observable,value,unit\n"
				row := "%s,rm,soil,%s,atom%%\n"
				spec := &SamplesSpec{File: "rm.csv"}
				if !unitCol {
					csv = "sample,group,observable,value\n"
					row = "%s,rm,soil,%s\n"
					spec.Unit = UnitAtomPercent // the long form's unit
				}
				csv += fmt.Sprintf(row, "a", tt.atomPercent) + fmt.Sprintf(row, "b", tt.atomPercent)
				s, err := ReadSamples("rm.csv", []byte(csv), spec, site, Options{AllowEnriched: true})
				if err != nil {
					t.Fatal(err)
				}
				if got := s.Groups[0].Mean; math.Abs(got-tt.delta) > tol {
					t.Errorf("unit column %v: got %.9f ‰, want %g ‰ within %g", unitCol, got, tt.delta, tol)
				}
				if s.Source.AtomPercent != 2 {
					t.Errorf("source counts %d conversions, want 2", s.Source.AtomPercent)
				}
			}
		})
	}
}

// Units other than ‰ and atom %, mixed units and impossible atom % are
// errors with their position.
func TestUnitErrors(t *testing.T) {
	t.Parallel()
	site := testSite(t)
	const head = "sample,group,observable,value,unit\n"
	tests := []struct {
		name string
		data string
		want string
	}{
		{"unknown unit", head + "s1,a,soil,1,mg\ns2,a,soil,2,\n",
			`rows.csv:2: unit: unit "mg": expected permil (‰, the default) or atom% (15N atom percent)`},
		{"mixed within an observable", head + "s1,a,soil,0.3665,atom %\ns2,b,soil,2,‰\n",
			`rows.csv:3: unit: unit "‰" differs from "atom%" used for soil on line 2; give one observable in one unit`},
		{"mixed pool units across groups", head + "s1,a,pool:nitrate,1,kg N/ha\ns2,a,pool:nitrate,2,kg N/ha\ns3,b,pool:nitrate,2,g N/m2\n",
			`rows.csv:4: unit: unit "g N/m2" differs from "kg n/ha" used for pool:nitrate on line 2; give one observable in one unit`},
		{"atom % above 100", head + "s1,a,soil,120,atom%\n",
			"rows.csv:2: value: a 15N atom percent must be between 0 and 100, got 120"},
		{"atom % of nitrate oxygen", head + "s1,a,nitrate-d18o,0.2,atom%\n",
			"rows.csv:2: unit: atom% applies to 15N; nitrate-d18o is given in ‰"},
		{"enriched after conversion", head + "s1,a,soil,0.5,atom%\ns2,a,soil,0.5,atom%\n",
			// 0.5 atom % is +366.823 ‰ (GNU bc 1.07.1, as above).
			"rows.csv:2: value: converted from 0.5 atom%: δ15N 366.8232362683812 ‰ is beyond natural abundance (|δ| > 100 ‰); use --allow-enriched for a tracer study\n" +
				"rows.csv:3: value: converted from 0.5 atom%: δ15N 366.8232362683812 ‰ is beyond natural abundance (|δ| > 100 ‰); use --allow-enriched for a tracer study"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			_, err := ReadSamples("rows.csv", []byte(tt.data), &SamplesSpec{File: "rows.csv"}, site, Options{})
			if err == nil || err.Error() != tt.want {
				t.Errorf("got  %v\nwant %s", err, tt.want)
			}
		})
	}
}
