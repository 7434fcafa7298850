package knowledge

import (
	"bytes"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"testing/fstest"
)

var update = flag.Bool("update", false, "rewrite golden files")

// Every embedded file loads, validates, and every cited key resolves.
func TestDefaultLoads(t *testing.T) {
	t.Parallel()
	b, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	if len(b.Effects) != len(Processes) {
		t.Errorf("%d effects for %d processes", len(b.Effects), len(Processes))
	}
	for _, id := range []string{"urea", "ammonium-fertilizer", "nitrate-fertilizer", "manure", "wastewater", "deposition", "biological-fixation"} {
		if _, ok := b.Source(id); !ok {
			t.Errorf("required source %q missing", id)
		}
	}
	for _, id := range []string{"temperate-deciduous-forest", "boreal-conifer-forest", "tropical-lowland-forest", "temperate-grassland", "dryland-shrubland", "fertilized-cropland"} {
		if _, ok := b.Site(id); !ok {
			t.Errorf("required site template %q missing", id)
		}
	}
	for _, obs := range []string{"foliage", "soil", "soil-nitrate", "soil-ammonium", "fungi", "n2o", "nitrate-d18o", "n2o-sp", "pool:nitrate", "flux:nitrification", "flux:n2o"} {
		found := false
		for _, m := range b.Measurements {
			found = found || m.Observable == obs
		}
		if !found {
			t.Errorf("no catalogue measurement of %q", obs)
		}
	}
}

// The trade's rules of thumb for isotope effects (common practice): every
// process leaves the substrate enriched or unchanged (ε ≥ 0 at its typical
// value), and the typical values sit inside the ranges of the trade:
// mineralization −1 to +1 ‰; nitrification 12–35 ‰; denitrification
// 0–33 ‰; assimilation and immobilization −1 to +1.6 ‰; NH3
// volatilization at high pH 19–30 ‰ (2018 IEHS study, α 1.019–1.030).
func TestEffectsWithinRulesOfThumb(t *testing.T) {
	t.Parallel()
	b := MustDefault()
	within := map[string][2]float64{
		"mineralization":          {-1, 1},
		"nitrification":           {12, 35},
		"denitrification":         {0, 33},
		"uptake-ammonium":         {-1, 1.6},
		"uptake-nitrate":          {-1, 1.6},
		"immobilization-ammonium": {-1, 1.6},
		"immobilization-nitrate":  {-1, 1.6},
		"volatilization":          {19, 30},
	}
	// Inverse effects the trade knows of (the product is enriched): animal
	// product is about 3 ‰ above the diet (DeNiro & Epstein 1981, from
	// memory), so N exported in it leaves the pasture depleted.
	inverse := map[string]bool{"grazing-export": true}
	for _, e := range b.Effects {
		if e.EpsilonPermil < 0 && !inverse[e.ID] {
			t.Errorf("%s: typical ε %g < 0 would leave the substrate depleted", e.ID, e.EpsilonPermil)
		}
		if r, ok := within[e.ID]; ok {
			if e.RangePermil[0] < r[0]-1e-9 || e.RangePermil[1] > r[1]+1e-9 {
				t.Errorf("%s: range %v outside the trade's %v", e.ID, e.RangePermil, r)
			}
		}
	}
}

// Source end-members against published values: synthetic fertilizer mean
// +0.2 ‰ with 98.5 % below +4 ‰ (Bateman & Kelly 2007); septic nitrate +7
// to +14 ‰ (Robertson 2021); organic fertilizers mean +8.5 ‰ (Bateman &
// Kelly 2007); fixed N −2 to 0 ‰ (Shearer & Kohl 1986, from memory).
func TestSourcesAgainstPublishedValues(t *testing.T) {
	t.Parallel()
	b := MustDefault()
	check := func(id string, lo, hi float64) {
		s, _ := b.Source(id)
		if s.D15NPermil < lo || s.D15NPermil > hi {
			t.Errorf("%s: typical δ15N %g outside [%g, %g]", id, s.D15NPermil, lo, hi)
		}
	}
	// −2 to +2 ‰: the band holding 80 % of synthetic fertilizers (Bateman &
	// Kelly 2007, confirmed, FACTS.md §2); 8 to 9 ‰ brackets their organic
	// mean of +8.5 ‰.
	check("urea", -2, 2)
	check("ammonium-fertilizer", -2, 2)
	check("nitrate-fertilizer", -2, 2)
	check("wastewater", 7, 14)
	check("manure", 8, 9)
	check("biological-fixation", -2, 0)
	nf, _ := b.Source("nitrate-fertilizer")
	if nf.D18OPermil == nil || *nf.D18OPermil < 17 || *nf.D18OPermil > 25 {
		t.Errorf("nitrate fertilizer δ18O should lie in +17 to +25 ‰ (Kendall 1998, from memory)")
	}
}

// Author–year citations as used in reports.
func TestCite(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name string
		ref  Reference
		want string
	}{
		{"one", Reference{Authors: []string{"Högberg, P."}, Year: 1997}, "Högberg 1997"},
		{"two", Reference{Authors: []string{"Houlton, B. Z.", "Bai, E."}, Year: 2009}, "Houlton & Bai 2009"},
		{"many", Reference{Authors: []string{"Craine, J. M.", "Elmore, A. J.", "Aidar, M. P. M."}, Year: 2009}, "Craine et al. 2009"},
		{"organisation", Reference{Authors: []string{"CIAAW"}}, "CIAAW n.d."},
	}
	for _, tt := range tests {
		if got := tt.ref.Cite(); got != tt.want {
			t.Errorf("%s: got %q, want %q", tt.name, got, tt.want)
		}
	}
}

// A golden summary of the parsed knowledge base, so that YAML edits show as
// diffs in review. Refresh with go test ./knowledge -update.
// Regression pin: the golden file is the program's own output as last
// reviewed, not an external value.
func TestGoldenSummary(t *testing.T) {
	t.Parallel()
	b := MustDefault()
	var buf bytes.Buffer
	fmt.Fprintf(&buf, "nitrification δ18O %g %v\n", b.NitrateOxygen.NitrificationD18OPermil, b.NitrateOxygen.RangePermil)
	for _, e := range b.Effects {
		ratio := "-"
		if e.D18ORatio != nil {
			ratio = fmt.Sprint(*e.D18ORatio)
		}
		fmt.Fprintf(&buf, "effect %s ε=%g %v %s %s ratio=%s refs=%v (%s)\n", e.ID, e.EpsilonPermil, e.RangePermil, e.Distribution, e.Expressed, ratio, e.Refs, e.Status)
	}
	for _, s := range b.Sources {
		d18 := "-"
		if s.D18OPermil != nil {
			d18 = fmt.Sprint(*s.D18OPermil, s.D18ORangePermil)
		}
		fmt.Fprintf(&buf, "source %s → %s δ15N=%g %v δ18O=%s refs=%v (%s)\n", s.ID, s.Pool, s.D15NPermil, s.D15NRangePermil, d18, s.Refs, s.Status)
		for _, p := range s.Parts {
			fmt.Fprintf(&buf, "  part %s %g δ15N=%g %v\n", p.Pool, p.Share, p.D15NPermil, p.D15NRangePermil)
		}
		if !s.Contexts.Empty() {
			fmt.Fprintf(&buf, "  undeclared where %+v, %v kg N/ha/yr\n", s.Contexts, s.RateRange)
		}
	}
	for _, m := range b.Forcings.Management {
		fmt.Fprintf(&buf, "management %s %v: %d moves, %d rates, severities %d, grazing %v (%s)\n", m.ID, m.Aliases, len(m.Moves), len(m.Rates), len(m.Severity), m.Grazing != nil, m.Status)
	}
	fmt.Fprintf(&buf, "context-only tags %v\n", b.Forcings.ContextOnly)
	for _, m := range b.Measurements {
		fmt.Fprintf(&buf, "measurement %s → %s %s sd=%g/%g cost=%d\n", m.ID, m.Observable, m.Unit, m.AnalyticalSD, m.FieldSD, m.Cost)
	}
	for _, id := range b.SiteIDs() {
		fmt.Fprintf(&buf, "site %s\n", id)
	}
	fmt.Fprintf(&buf, "%d references\n", len(b.References))
	golden(t, "testdata/knowledge.golden", buf.Bytes())
}

func golden(t *testing.T, path string, got []byte) {
	t.Helper()
	if *update {
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./knowledge -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from the parsed knowledge base; review and run go test ./knowledge -update\n--- got\n%s", path, got)
	}
}

// Broken knowledge files are reported with file, line and field.
func TestBadKnowledgeFiles(t *testing.T) {
	t.Parallel()
	good := map[string]string{}
	for _, name := range []string{"effects.yaml", "sources.yaml", "forcings.yaml", "measurements.yaml", "references.yaml"} {
		data, err := files.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		good[name] = string(data)
	}
	tests := []struct {
		name, file, old, new, want string
	}{
		{"unknown key", "sources.yaml", "    pool: ammonium\n    d15n: 0\n", "    pool: ammonium\n    d15m: 0\n", `sources.yaml:17: sources[0].d15m: unknown key (keys here: id, label, pool, parts, d15n, range, d18o, d18o_range, contexts, rate, note, refs, status)`},
		{"range outside", "sources.yaml", "    range: [-4, 4]\n", "    range: [1, 4]\n", "sources.yaml:18: sources[0].range: typical value 0 lies outside [1, 4]"},
		{"unknown process", "effects.yaml", "  - id: mineralization\n", "  - id: mineralisation\n", `unknown process "mineralisation"`},
		{"bad number", "measurements.yaml", "    analytical_sd: 0.2\n", "    analytical_sd: low\n", `measurements.yaml:16: measurements[0].analytical_sd: expected a number, got "low"`},
		{"missing reference", "sources.yaml", "refs: [bateman2007, usgs-nitrogen]", "refs: [bateman2007, nobody1999]", `reference "nobody1999" is not in references.yaml`},
		{"mixed type without a model", "effects.yaml", "    models: ecto\n", "", `mycorrhizal_types[3].models: a mixed type names the type its fungal pool models`},
		{"unknown mycorrhizal type", "effects.yaml", "  - type: ericoid\n", "  - type: orchid\n", `mycorrhizal_types[1].type: expected ecto, ericoid, arbuscular or mixed, got "orchid"`},
		{"missing mycorrhizal type", "effects.yaml", "  - type: ericoid\n", "  - type: ecto\n", `mycorrhizal type "ericoid" has no fungal transfer effect`},
		{"fungal range outside", "effects.yaml", "    epsilon: 1\n    range: [0, 3]\n", "    epsilon: 1\n    range: [2, 3]\n", "mycorrhizal_types[2].range: typical value 1 lies outside [2, 3]"},
		{"measurement mycorrhizal type", "measurements.yaml", "mycorrhizal_types: [ecto, ericoid, mixed]", "mycorrhizal_types: [ecto, orchid]", `unknown mycorrhizal type "orchid"`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			fsys := fstest.MapFS{"sites/x.yaml": {Data: []byte("site: x\n")}}
			for name, data := range good {
				if name == tt.file {
					if !strings.Contains(data, tt.old) {
						t.Fatalf("fixture text %q not found in %s", tt.old, name)
					}
					data = strings.Replace(data, tt.old, tt.new, 1)
				}
				fsys[name] = &fstest.MapFile{Data: []byte(data)}
			}
			_, err := Load(fsys)
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Errorf("got %v\nwant it to contain %q", err, tt.want)
			}
		})
	}
}
