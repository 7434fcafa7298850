package forward

import (
	"errors"
	"flag"
	"fmt"
	"math"
	"nlens/knowledge/input"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"nlens/knowledge"
	"nlens/knowledge/inputtest"
)

// Fuzzing the site file parser (issue 5, item 3).
//
// Run it for a minute with
//
//	go test ./forward -run '^$' -fuzz '^FuzzParseSite$' -fuzztime 60s -fuzzminimizetime 5s
//
// The seed corpus is committed in testdata/fuzz/FuzzParseSite/: the files
// named "seed-*" are written from fuzzSiteSeeds by
//
//	go test ./forward -run '^TestFuzzSiteSeedCorpus$' -update-corpus
//
// and any other file there is an input that once failed (kept as a
// regression case, as go test writes it).
//
// The property, for every input:
//
//   - ParseSite never panics;
//   - a rejection is a positioned error (see checkSitePositioned for the
//     rule on lines);
//   - an accepted site holds only finite numbers, and its baseline steady
//     state is either refused as ill-conditioned (a ConditionError with a
//     finite or infinite condition number, never NaN) or finite, with a
//     finite δ for every observable simulate prints.

var updateCorpus = flag.Bool("update-corpus", false, "rewrite the seed-* files of the fuzz corpus in testdata/fuzz")

// fuzzSiteFile is the name the fuzz target gives its input.
const fuzzSiteFile = "fuzz-site.yaml"

func FuzzParseSite(f *testing.F) {
	kb := knowledge.MustDefault()
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := ParseSite(fuzzSiteFile, data, kb)
		if err != nil {
			if s != nil {
				t.Errorf("ParseSite returned a site and an error: %v", err)
			}
			checkSitePositioned(t, err, data)
			return
		}
		checkSiteFinite(t, s)
		checkSiteSolves(t, s)
	})
}

// checkSitePositioned holds a rejection to the positioning rule:
//
//   - errors.As finds a *input.Error, and every InputError in the
//     error (an InputErrors list is checked element by element) names the
//     file and says what is wrong;
//   - Line is 1-based and never past the end of the text (the YAML parser
//     may point one line after the last one for a problem at the end);
//   - Line is 0 only when no line of the text is to blame, which is the
//     case for a file with no YAML content at all (empty, or only blanks,
//     comments and a byte-order mark): every other problem is inside the
//     text and must say where.
func checkSitePositioned(t *testing.T, err error, data []byte) {
	t.Helper()
	var first *input.Error
	if !errors.As(err, &first) {
		t.Fatalf("rejection is not a *input.Error: %T %v", err, err)
	}
	lines := inputtest.LineCount(data)
	for _, e := range input.Flatten(err) {
		switch {
		case e.File != fuzzSiteFile:
			t.Errorf("error names file %q, want %q: %v", e.File, fuzzSiteFile, e)
		case e.Msg == "":
			t.Errorf("error says nothing: %#v", e)
		case e.Line < 0 || e.Line > lines+1:
			t.Errorf("error line %d is outside the %d-line text: %v", e.Line, lines, e)
		case e.Line == 0 && !inputtest.YAMLBlank(data):
			t.Errorf("error has no line although the text has content: %v", e)
		}
	}
}

// checkSiteFinite fails on any NaN or infinity in an accepted site.
func checkSiteFinite(t *testing.T, s *Site) {
	t.Helper()
	bad := func(what string, v float64) {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			t.Errorf("accepted site has %s = %g", what, v)
		}
	}
	bad("nitrate_oxygen.nitrification_d18o", s.NitrificationD18O)
	for i, v := range s.PoolKg {
		bad("pools."+s.Pools[i], v)
	}
	for i, in := range s.Inputs {
		bad(fmt.Sprintf("inputs[%d].rate", i), in.RateKgPerHaYr)
		bad(fmt.Sprintf("inputs[%d].d15n", i), in.D15N)
		bad(fmt.Sprintf("inputs[%d].d18o", i), in.D18O)
	}
	for i, tr := range s.Transfers {
		bad(fmt.Sprintf("transfers[%d].rate", i), tr.RateKgPerHaYr)
		bad(fmt.Sprintf("transfers[%d].epsilon", i), tr.Epsilon)
		bad(fmt.Sprintf("transfers[%d].epsilon18", i), tr.Epsilon18)
		bad(fmt.Sprintf("transfers[%d] ε18/ε15", i), tr.D18ORatio)
		bad(fmt.Sprintf("transfers[%d].spread", i), tr.Spread)
	}
	p := s.Params()
	for j, k := range p.K {
		bad(fmt.Sprintf("transfers[%d] rate constant", j), k)
	}
}

// checkSiteSolves runs the baseline steady state of an accepted site: it
// is either refused with a ConditionError whose number is not NaN, or every
// pool and every δ observable simulate prints is finite.
func checkSiteSolves(t *testing.T, s *Site) {
	t.Helper()
	sim, err := Simulate(s, Change{}, nil)
	if err != nil {
		var ce *ConditionError
		if !errors.As(err, &ce) {
			t.Fatalf("accepted site fails to solve with an error that is not a ConditionError: %v", err)
		}
		if math.IsNaN(ce.Cond) {
			t.Errorf("condition number is NaN: %v", err)
		}
		return
	}
	for i, name := range s.Pools {
		if v := sim.Baseline.Total(i); math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			t.Errorf("baseline pool %s = %g kg N/ha", name, v)
		}
	}
	for _, name := range s.DeltaNames() {
		o, err := s.Observable(name)
		if err != nil {
			t.Fatalf("observable %q listed but not bound: %v", name, err)
		}
		if v := o.Value(&sim.Baseline, &sim.Base); math.IsNaN(v) || math.IsInf(v, 0) {
			t.Errorf("baseline %s = %g", name, v)
		}
	}
}

// fuzzSiteSeeds are the seed inputs: every built-in template (read from
// the knowledge base when the corpus is written), the test sites in
// testdata, and hostile or malformed text. Each entry says what it probes.
func fuzzSiteSeeds(t *testing.T) map[string][]byte {
	t.Helper()
	kb := knowledge.MustDefault()
	seeds := map[string][]byte{}
	for _, id := range kb.SiteIDs() {
		tpl, ok := kb.Site(id)
		if !ok {
			t.Fatalf("template %q listed but not found", id)
		}
		seeds["template-"+id] = tpl.Data
	}
	for _, name := range []string{"five-pool.yaml", "stiff.yaml"} {
		data, err := os.ReadFile(filepath.Join("testdata", name))
		if err != nil {
			t.Fatal(err)
		}
		seeds["testdata-"+strings.TrimSuffix(name, ".yaml")] = data
	}
	// A small valid site (invented numbers, balanced by hand) that the
	// malformed seeds below vary.
	const small = "site: small\n" +
		"pools: {organic: 1000, ammonium: 5, nitrate: 2, plant: 100}\n" +
		"inputs:\n" +
		"  - {to: ammonium, rate: 5, d15n: -1}\n" +
		"transfers:\n" +
		"  - {process: mineralization, from: organic, to: ammonium, rate: 20}\n" +
		"  - {process: nitrification, from: ammonium, to: nitrate, rate: 10}\n" +
		"  - {process: uptake-ammonium, from: ammonium, to: plant, rate: 15}\n" +
		"  - {process: uptake-nitrate, from: nitrate, to: plant, rate: 8}\n" +
		"  - {process: denitrification, from: nitrate, to: out, rate: 2}\n" +
		"  - {process: litterfall, from: plant, to: organic, rate: 23}\n" +
		"  - {process: leaching-organic, from: organic, to: out, rate: 3}\n"
	seeds["small"] = []byte(small)
	// GO-NOTES §4: this input panics gopkg.in/yaml.v3 v3.0.1.
	seeds["yaml-crasher"] = []byte("\na:\n<<:\n-\n?\n-\n")
	seeds["empty"] = []byte{}
	seeds["blank"] = []byte("  \n\n# only a comment\n")
	seeds["bom"] = append([]byte("\ufeff"), small...)
	seeds["bom-only"] = []byte("\ufeff")
	seeds["tab-indent"] = []byte(strings.Replace(small, "  - {to: ammonium", "\t- {to: ammonium", 1))
	seeds["huge-numbers"] = []byte(strings.NewReplacer("organic: 1000", "organic: 1e308", "rate: 20}", "rate: 1.7976931348623157e308}", "d15n: -1", "d15n: -1e-320").Replace(small))
	seeds["tiny-pool"] = []byte(strings.Replace(small, "nitrate: 2,", "nitrate: 5e-324,", 1))
	seeds["nan-inf"] = []byte(strings.NewReplacer("organic: 1000", "organic: .nan", "rate: 20}", "rate: .inf}", "d15n: -1", "d15n: -.inf").Replace(small))
	seeds["nan-oxygen"] = []byte(small + "nitrate_oxygen: {nitrification_d18o: .nan}\n")
	seeds["inf-input-d18o"] = []byte(strings.Replace(small, "  - {to: ammonium, rate: 5, d15n: -1}\n", "  - {to: ammonium, rate: 5, d15n: -1}\n  - {to: nitrate, rate: 1, d15n: 2, d18o: .inf}\n", 1))
	seeds["duplicate-key"] = []byte(small + "site: again\n")
	seeds["duplicate-pool"] = []byte(strings.Replace(small, "plant: 100}", "plant: 100, organic: 3}", 1))
	seeds["anchors"] = []byte("site: &id anchored\n" +
		"pools: &p {organic: 1000, ammonium: 5, nitrate: 2, plant: 100}\n" +
		"inputs:\n  - &in {to: ammonium, rate: 5, d15n: -1}\n  - *in\n" +
		"transfers:\n  - &t {process: mineralization, from: organic, to: ammonium, rate: 20}\n" +
		"  - {<<: *t, rate: 3, to: out, process: leaching-organic}\n" +
		"  - {process: uptake-ammonium, from: ammonium, to: plant, rate: 15}\n" +
		"  - {process: nitrification, from: ammonium, to: nitrate, rate: 10}\n" +
		"  - {process: uptake-nitrate, from: nitrate, to: plant, rate: 10}\n" +
		"  - {process: litterfall, from: plant, to: organic, rate: 25}\n" +
		"description: *id\n")
	seeds["alias-loop"] = []byte("site: &a [*a]\n")
	seeds["billion-laughs"] = []byte("a: &a [x, x, x, x, x, x, x, x, x]\n" +
		"b: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a]\n" +
		"c: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b]\n" +
		"d: &d [*c, *c, *c, *c, *c, *c, *c, *c, *c]\n" +
		"site: [*d, *d, *d, *d, *d, *d, *d, *d, *d]\n")
	seeds["deep-nesting"] = []byte("site: " + strings.Repeat("[", 2000) + strings.Repeat("]", 2000) + "\n")
	seeds["deep-mapping"] = []byte(strings.Repeat("a: {", 500) + strings.Repeat("}", 500) + "\n")
	seeds["top-level-list"] = []byte("- site: x\n- pools: {}\n")
	seeds["top-level-scalar"] = []byte("just text\n")
	seeds["two-documents"] = []byte(small + "---\nsite: second\n")
	seeds["document-end"] = []byte("...\n")
	seeds["wrong-types"] = []byte("site: [a]\npools: 7\ninputs: {to: x}\ntransfers: yes\n")
	seeds["unknown-key"] = []byte(small + "soil_ph: 5\n")
	seeds["unknown-pool"] = []byte(strings.Replace(small, "plant: 100}", "plant: 100, litter: 30}", 1))
	seeds["negative-rate"] = []byte(strings.Replace(small, "rate: 20}", "rate: -20}", 1))
	seeds["no-way-out"] = []byte(strings.NewReplacer("  - {process: leaching-organic, from: organic, to: out, rate: 3}\n", "",
		"  - {process: denitrification, from: nitrate, to: out, rate: 2}\n", "").Replace(small))
	seeds["invalid-utf8"] = []byte("site: \xff\xfe\n")
	seeds["control-char"] = []byte("site: a\x01b\n")
	seeds["crlf"] = []byte(strings.ReplaceAll(small, "\n", "\r\n"))
	return seeds
}

// TestFuzzSiteSeedCorpus keeps the committed seed corpus in step with
// fuzzSiteSeeds (rewrite it with -update-corpus).
func TestFuzzSiteSeedCorpus(t *testing.T) {
	seeds := map[string][]any{}
	for name, data := range fuzzSiteSeeds(t) {
		seeds[name] = []any{data}
	}
	inputtest.SyncSeedCorpus(t, filepath.Join("testdata", "fuzz", "FuzzParseSite"), seeds, *updateCorpus)
}
