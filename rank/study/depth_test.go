package study

import (
	"slices"
	"strings"
	"testing"

	"nlens/forward"
	"nlens/knowledge"
)

// Depths and horizons are read as forest floor or mineral soil (depth.go:
// depths in cm below the mineral surface; O horizons after Soil Survey
// Staff, L/F/H by common practice).
func TestLayers(t *testing.T) {
	t.Parallel()
	tests := []struct {
		depth, horizon string
		comma          bool
		want           layer
		field          string
	}{
		{"", "", false, layerUnknown, ""},
		{"10", "", false, layerMineral, ""},
		{"0-10", "", false, layerMineral, ""},
		{"0 – 10", "", false, layerMineral, ""},
		{"10 to 20", "", false, layerMineral, ""},
		{"0-10 cm", "", false, layerMineral, ""},
		{"-5 cm", "", false, layerFloor, ""},
		{"0", "", false, layerFloor, ""},
		{"-5", "", false, layerFloor, ""},
		{"−5–0", "", false, layerFloor, ""},
		{"-8--3", "", false, layerFloor, ""},
		{"-2,5", "", true, layerFloor, ""},
		{"0,5-10", "", true, layerMineral, ""},
		{"", "Oi", false, layerFloor, ""},
		{"", "Oe", false, layerFloor, ""},
		{"", "Oa", false, layerFloor, ""},
		{"", "O", false, layerFloor, ""},
		{"", "F", false, layerFloor, ""},
		{"", "Ah", false, layerMineral, ""},
		{"", "Bw", false, layerMineral, ""},
		{"", "E", false, layerMineral, ""},
		{"-3", "Oa", false, layerFloor, ""},
		{"0-10", "A", false, layerMineral, ""},
		{"deep", "", false, layerUnknown, "depth_cm"},
		{"10-", "", false, layerUnknown, "depth_cm"},
		{"", "humus", false, layerUnknown, "horizon"},
		{"10-20", "Oa", false, layerUnknown, "horizon"},
	}
	for _, tt := range tests {
		num := func(s string) (float64, bool) { return parseNumber(s, tt.comma) }
		got, field, _ := layerOf(tt.depth, tt.horizon, num)
		if got != tt.want || field != tt.field {
			t.Errorf("depth %q horizon %q: got layer %d field %q, want %d %q", tt.depth, tt.horizon, got, field, tt.want, tt.field)
		}
	}
}

// floorRows are soil samples of two groups from the forest floor (depth
// ≤ 0 or an O horizon) and the mineral soil (invented values).
const floorRows = "sample,group,observable,value,depth_cm,horizon\n" +
	"c1,control,soil,-2.0,-5-0,\n" +
	"c2,control,soil,-1.0,,Oa\n" +
	"c1,control,soil,4.0,0-10,\n" +
	"c2,control,soil,5.0,0-10,\n" +
	"t1,fert,soil,-0.5,-5-0,\n" +
	"t2,fert,soil,0.5,-5-0,\n" +
	"t1,fert,soil,4.5,0-10,\n" +
	"t2,fert,soil,5.5,0-10,\n"

// Where the site has a forest-floor pool, soil rows from the forest floor
// are its observable (issue 14, item 5). Means by hand: control forest
// floor (−2 − 1)/2 = −1.5, mineral soil 4.5; fert forest floor 0, mineral
// soil 5.
func TestForestFloorAssigned(t *testing.T) {
	t.Parallel()
	kb := knowledge.MustDefault()
	site, err := forward.ParseSite("floor-site.yaml", []byte(forestFloorSite), kb)
	if err != nil {
		t.Fatal(err)
	}
	s, err := ReadSamples("rows.csv", []byte(floorRows), &SamplesSpec{File: "rows.csv"}, site, Options{})
	if err != nil {
		t.Fatal(err)
	}
	want := map[groupKey]float64{
		{"control", forestFloor}: -1.5, {"control", "soil"}: 4.5,
		{"fert", forestFloor}: 0, {"fert", "soil"}: 5,
	}
	if len(s.Groups) != len(want) {
		t.Fatalf("got %d groups, want %d: %+v", len(s.Groups), len(want), s.Groups)
	}
	for _, g := range s.Groups {
		if m, ok := want[groupKey{g.Group, g.Observable}]; !ok || g.Mean != m || g.N != 2 {
			t.Errorf("group %s %s: mean %g n %d, want %g, 2", g.Group, g.Observable, g.Mean, g.N, m)
		}
	}
	if s.Source.ForestFloor != 4 {
		t.Errorf("source counts %d rows assigned to the forest floor, want 4", s.Source.ForestFloor)
	}
	// c1 is described by its depth, c2 by its horizon.
	wantWarn := []string{`rows.csv:2: group "control" pools forest-floor samples from 2 different depths as replicates`}
	if !slices.Equal(s.Warnings, wantWarn) {
		t.Errorf("warnings:\n got %q\nwant %q", s.Warnings, wantWarn)
	}
}

// forestFloorSite is a small site with a forest-floor pool (invented,
// balanced numbers: litterfall 10 + 14 into the forest floor and the
// mineral soil, 10 out of the forest floor).
const forestFloorSite = `site: floor-site
pools: {forest-floor: 600, organic: 1000, ammonium: 5, nitrate: 2, plant: 100, foliage: 20}
inputs:
  - {to: ammonium, rate: 5, d15n: -1}
transfers:
  - {process: mineralization, from: organic, to: ammonium, rate: 30}
  - {process: nitrification, from: ammonium, to: nitrate, rate: 10}
  - {process: uptake-ammonium, from: ammonium, to: plant, rate: 24}
  - {process: uptake-nitrate, from: nitrate, to: plant, rate: 9}
  - {process: denitrification, from: nitrate, to: out, rate: 1}
  - {process: allocation, from: plant, to: foliage, rate: 10}
  - {process: litterfall, from: foliage, to: forest-floor, rate: 10}
  - {process: leaching-organic, from: forest-floor, to: organic, rate: 10}
  - {process: litterfall, from: plant, to: organic, rate: 23}
  - {process: leaching-organic, from: organic, to: out, rate: 4}
`

// Without a forest-floor pool, forest-floor rows stay soil samples, and a
// warning says they are pooled with the mineral soil (besides the warning
// about pooled depths).
func TestForestFloorWithoutPool(t *testing.T) {
	t.Parallel()
	site, err := forward.LoadSite("temperate-grassland", knowledge.MustDefault())
	if err != nil {
		t.Fatal(err)
	}
	if hasForestFloor(site) {
		t.Fatal("the grassland template has a forest-floor pool; pick a site without one")
	}
	s, err := ReadSamples("rows.csv", []byte(floorRows), &SamplesSpec{File: "rows.csv"}, site, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Groups) != 2 || s.Groups[0].N != 4 || s.Groups[1].N != 4 {
		t.Errorf("got %+v, want two soil groups of 4", s.Groups)
	}
	want := []string{
		`rows.csv:2: group "control" pools soil samples from 3 different depths as replicates`,
		`rows.csv:2: group "control": forest-floor samples (depth ≤ 0 cm or an O horizon, first on line 2) are pooled with the mineral soil, because site "temperate-grassland" has no forest-floor pool`,
		`rows.csv:6: group "fert" pools soil samples from 2 different depths as replicates`,
		`rows.csv:6: group "fert": forest-floor samples (depth ≤ 0 cm or an O horizon, first on line 6) are pooled with the mineral soil, because site "temperate-grassland" has no forest-floor pool`,
	}
	if !slices.Equal(s.Warnings, want) {
		t.Errorf("warnings:\n got %q\nwant %q", s.Warnings, want)
	}
	if s.Source.ForestFloor != 0 || strings.Contains(s.Source.String(), "forest-floor") {
		t.Errorf("source %q claims an assignment", s.Source.String())
	}
}

// A soil profile sampled at several depths under one sample id is not a
// duplicate: the depth tells the rows apart.
func TestProfileIsNoDuplicate(t *testing.T) {
	t.Parallel()
	data := "sample,group,observable,value,depth_cm\np1,a,soil,1,0-10\np1,a,soil,2,10-20\np2,a,soil,3,0-10\np2,a,soil,3,0-10\n"
	_, err := ReadSamples("rows.csv", []byte(data), &SamplesSpec{File: "rows.csv"}, testSite(t), Options{})
	want := `rows.csv:5: sample: sample "p2" already has a value of soil on line 4`
	if err == nil || err.Error() != want {
		t.Errorf("got %v, want %s", err, want)
	}
}
