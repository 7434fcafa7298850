package main

import (
	"bytes"
	"os"
	"slices"
	"strings"
	"testing"

	"nlens/knowledge"
)

// The bad-input table (issue 5, item 5): malformed studies, sites and
// sample CSVs run through the command line in-process. Each is refused with
// exit code 1 and exactly one expected message naming file, line and field;
// nothing is written to stdout and no file is created.
//
// Every expected message below was written from the design (DESIGN §3, §6,
// §7: "clear error", "every input error with file, line and field") and the
// line numbers were counted by hand in the input texts, which are invented
// for this test. Long lists that are knowledge data rather than message
// wording (the source ids, template ids, process names) are filled in from
// the knowledge base: {sources}, {templates}, {processes}.

// badStudy is a valid study (invented numbers); the cases below change one
// thing in it. Line numbers are those of this text.
const badStudy = `title: bad-input table base study
site:
  template: temperate-deciduous-forest
  soil_ph: 5.2
  drainage: well
comparisons:
  - name: fertilized vs control
    control: control
    treatment: fert
    years: 4
    additions:
      - {source: ammonium-fertilizer, rate: 50, d15n: -0.8}
groups:
  control:
    foliage: {mean: -1.0, sd: 0.6, n: 5}
    soil: {mean: 4.0, sd: 0.5, n: 5}
  fert:
    foliage: {mean: 1.0, sd: 0.8, n: 5}
    soil: {mean: 4.2, sd: 0.5, n: 4}
`

// csvStudy reads its groups from samples.csv.
const csvStudy = `site: {template: temperate-deciduous-forest}
comparisons:
  - {control: control, treatment: fert, years: 2}
samples: samples.csv
`

// badSamples is a valid samples CSV for csvStudy (invented values).
const badSamples = `sample,group,observable,value
c1,control,foliage,-1.2
c2,control,foliage,-0.8
t1,fert,foliage,1.1
t2,fert,foliage,0.7
`

// badSite is a valid site file (invented numbers, balanced by hand: every
// pool's inputs equal its outputs, so the steady state is the file's pools).
const badSite = `site: small
pools:
  organic: 1000
  ammonium: 5
  nitrate: 2
  plant: 100
inputs:
  - {to: ammonium, rate: 5, d15n: -1}
transfers:
  - {process: mineralization, from: organic, to: ammonium, rate: 20}
  - {process: nitrification, from: ammonium, to: nitrate, rate: 10}
  - {process: uptake-ammonium, from: ammonium, to: plant, rate: 15}
  - {process: uptake-nitrate, from: nitrate, to: plant, rate: 8}
  - {process: denitrification, from: nitrate, to: out, rate: 2}
  - {process: litterfall, from: plant, to: organic, rate: 23}
  - {process: leaching-organic, from: organic, to: out, rate: 3}
`

// siteStudy uses site.yaml.
const siteStudy = `site: {file: site.yaml}
comparisons:
  - {control: a, treatment: b, years: 2}
groups:
  a: {foliage: {mean: 1, sd: 1, n: 3}}
  b: {foliage: {mean: 2, sd: 1, n: 3}}
`

// illConditioned is a site whose 14N steady-state matrix K has a 1-norm
// condition number of 8e12, computed by hand: all pools are 1 kg N/ha, so
// each k equals its rate; organic → ammonium → nitrate → plant → organic
// turn over at 1e6 per year and the only loss, harvest, is 1e-6 per year.
// For a unit input to organic every pool carries the cycling flux
// F + 1 = 1e12 + 1 (F = 1e6/1e-6), so the largest column sum of −K⁻¹ is
// (F + 1)(3/1e6 + 1/(1e6 + 1e-6)) = 4.0e6, and ‖K‖₁ = 2·1e6 + 1e-6:
// the product is 8.0e12, above forward.MaxCondition (1e11). The error
// points at the transfers (line 6, the first of them).
const illConditioned = `site: nearly-closed
pools: {organic: 1, ammonium: 1, nitrate: 1, plant: 1}
inputs:
  - {to: ammonium, rate: 1, d15n: 0}
transfers:
  - {process: mineralization, from: organic, to: ammonium, rate: 1e6}
  - {process: nitrification, from: ammonium, to: nitrate, rate: 1e6}
  - {process: uptake-nitrate, from: nitrate, to: plant, rate: 1e6}
  - {process: litterfall, from: plant, to: organic, rate: 1e6}
  - {process: harvest, from: plant, to: out, rate: 1e-6}
`

// edit returns text with each old string replaced by its new one; a
// replacement that does not apply fails the test (so that an edit to the
// base texts cannot silently turn a case into a valid input).
func edit(t *testing.T, text string, oldnew ...string) string {
	t.Helper()
	for i := 0; i+1 < len(oldnew); i += 2 {
		if !strings.Contains(text, oldnew[i]) {
			t.Fatalf("fixture text %q not found", oldnew[i])
		}
		text = strings.Replace(text, oldnew[i], oldnew[i+1], 1)
	}
	return text
}

// badCase is one malformed input: the files written to an empty directory,
// the arguments (run from that directory) and the expected stderr.
type badCase struct {
	name  string
	files func(t *testing.T) map[string]string
	args  []string
	want  string
}

func studyOnly(text func(t *testing.T) string) func(t *testing.T) map[string]string {
	return func(t *testing.T) map[string]string { return map[string]string{"study.yaml": text(t)} }
}

func badCases() []badCase {
	check := []string{"check", "study.yaml"}
	simulate := []string{"simulate", "--site", "site.yaml"}
	study := func(oldnew ...string) func(t *testing.T) map[string]string {
		return studyOnly(func(t *testing.T) string { return edit(t, badStudy, oldnew...) })
	}
	samples := func(oldnew ...string) func(t *testing.T) map[string]string {
		return func(t *testing.T) map[string]string {
			return map[string]string{"study.yaml": csvStudy, "samples.csv": edit(t, badSamples, oldnew...)}
		}
	}
	site := func(oldnew ...string) func(t *testing.T) map[string]string {
		return func(t *testing.T) map[string]string {
			return map[string]string{"site.yaml": edit(t, badSite, oldnew...)}
		}
	}
	return []badCase{
		// Studies (DESIGN §6).
		{"negative sd", study("foliage: {mean: -1.0, sd: 0.6", "foliage: {mean: -1.0, sd: -0.6"), check,
			"study.yaml:15: groups.control.foliage.sd: sd must be a number ≥ 0, got -0.6"},
		{"n below 2", study("soil: {mean: 4.2, sd: 0.5, n: 4}", "soil: {mean: 4.2, sd: 0.5, n: 1}"), check,
			"study.yaml:19: groups.fert.soil.n: n must be at least 2 to estimate a standard error, got 1"},
		{"unknown observable", study("    soil: {mean: 4.0", "    needles: {mean: 4.0"), check,
			`study.yaml:16: groups.control.needles: unknown observable "needles" (use foliage, roots, litter, soil, soil-ammonium, soil-nitrate, leachate-nitrate, fungi, n2o, n2o-sp, nitrate-d18o, ecosystem, pool:<pool>, flux:<process>)`},
		{"comparison names a missing group", study("treatment: fert", "treatment: fertilised"), check,
			`study.yaml:9: comparisons[0].treatment: group "fertilised" is not defined (groups: control, fert)`},
		{"enriched mean without --allow-enriched", study("foliage: {mean: 1.0, sd: 0.8", "foliage: {mean: 140, sd: 0.8"), check,
			"study.yaml:18: groups.fert.foliage.mean: δ15N 140 ‰ is beyond natural abundance (|δ| > 100 ‰); use --allow-enriched for a tracer study"},
		{"impossible δ even for a tracer study", study("foliage: {mean: 1.0, sd: 0.8", "foliage: {mean: -1200, sd: 0.8"), []string{"check", "--allow-enriched", "study.yaml"},
			"study.yaml:18: groups.fert.foliage.mean: δ15N -1200 ‰ is below −1000 ‰, which would be a negative isotope ratio"},
		{"unknown key in the study's site", study("  drainage: well", "  drainge: well"), check,
			"study.yaml:5: site.drainge: unknown key (keys here: template, file, soil_ph, drainage, mean_annual_precip_mm, mycorrhizal_type, land_use, nearby)"},
		{"unknown site template", study("template: temperate-deciduous-forest", "template: rainforest"), check,
			`study.yaml:3: site.template: unknown site template "rainforest" (templates: {templates})`},
		{"unknown source of an addition", study("source: ammonium-fertilizer", "source: guano"), check,
			`study.yaml:12: comparisons[0].additions[0].source: unknown source "guano" (sources: {sources})`},
		{"addition without a rate", study("rate: 50, ", ""), check,
			"study.yaml:12: comparisons[0].additions[0].rate: the addition needs a rate > 0 in kg N/ha/yr"},
		{"negative years", study("years: 4", "years: -4"), check,
			"study.yaml:10: comparisons[0].years: years since the treatment began must be between 0 and 10000, got -4"},
		{"missing site", study("site:\n  template: temperate-deciduous-forest\n  soil_ph: 5.2\n  drainage: well\n", ""), check,
			"study.yaml:1: site: missing: give site: {template: ID} or site: {file: site.yaml}"},
		{"both template and file", study("  template: temperate-deciduous-forest\n", "  template: temperate-deciduous-forest\n  file: site.yaml\n"), check,
			"study.yaml:3: site: give either template or file, not both"},
		{"missing site file", studyOnly(func(*testing.T) string { return siteStudy }), check,
			"study.yaml:1: site.file: cannot read site file site.yaml: no such file or directory"},
		// YAML itself (GO-NOTES §4).
		{"bad YAML syntax", study("    treatment: fert\n", "    treatment: fert: x\n"), check,
			"study.yaml:9: YAML syntax: mapping values are not allowed in this context"},
		{"unclosed flow mapping", study("    soil: {mean: 4.0, sd: 0.5, n: 5}", "    soil: {mean: 4.0, sd: 0.5, n: 5"), check,
			"study.yaml:16: YAML syntax: did not find expected ',' or '}'"},
		{"tab indentation", study("    soil: {mean: 4.2", "\tsoil: {mean: 4.2"), check,
			"study.yaml:19: YAML syntax: a tab character indents this line; indent YAML with spaces only"},
		{"duplicate key", study("    soil: {mean: 4.0, sd: 0.5, n: 5}\n", "    soil: {mean: 4.0, sd: 0.5, n: 5}\n    foliage: {mean: 0, sd: 1, n: 3}\n"), check,
			"study.yaml:17: groups.control.foliage: the key appears twice in one mapping (first at line 15)"},
		{"wrong type", study("n: 4}", "n: four}"), check,
			`study.yaml:19: groups.fert.soil.n: expected a number, got "four"`},
		{"empty file", studyOnly(func(*testing.T) string { return "" }), check,
			"study.yaml: the file is empty"},
		{"only comments", studyOnly(func(*testing.T) string { return "# a study, one day\n\n" }), check,
			"study.yaml: the file is empty"},
		{"not a mapping", studyOnly(func(*testing.T) string { return "- site\n- groups\n" }), check,
			"study.yaml:1: expected a mapping of keys at the top level"},
		{"two documents", study("title: bad-input table base study\n", "title: first\n---\ntitle: bad-input table base study\n"), check,
			"study.yaml:2: a second YAML document starts here; the file must hold one document"},
		{"yaml.v3 crasher", studyOnly(func(*testing.T) string { return "\na:\n<<:\n-\n?\n-\n" }), check,
			"study.yaml:3: the merge key << needs a mapping or a list of mappings"},
		{"list as a key", study("groups:\n", "? [a, b]\n: 1\ngroups:\n"), check,
			"study.yaml:13: a key must be a plain name, not a list or a mapping"},
		{"alias to no anchor", study("  fert:\n", "  fert: *nothing\n  fert2:\n"), check,
			"study.yaml:17: YAML: the alias *nothing names no anchor &nothing defined before it"},
		{"not UTF-8", study("title: bad-input table base study", "title: bad-input table base study \xe9t\xe9"), check,
			"study.yaml:1: YAML text must be UTF-8 without control characters; found byte 0xE9, which is not UTF-8"},
		// Sample CSVs (DESIGN §6).
		{"unreadable CSV row", samples("c2,control,foliage,-0.8", `c2,control,foliage,"-0.8`), check,
			`samples.csv:3: unreadable CSV row: extraneous or missing " in quoted-field`},
		{"CSV bare quote in the first field", samples("c2,control", `c"2,control`), check,
			`samples.csv:3: unreadable CSV row: bare " in non-quoted-field`},
		{"CSV missing column", samples("sample,group,observable,value", "sample,group,value"), check,
			`samples.csv:1: observable: missing column "observable" (the header needs sample, group, observable and value or d15n)`},
		{"CSV header after a comment", samples("sample,group,observable,value", "# exported by hand\nsample,group,value"), check,
			`samples.csv:2: observable: missing column "observable" (the header needs sample, group, observable and value or d15n)`},
		{"CSV row separated by semicolons", samples("c2,control,foliage,-0.8", "c2;control;foliage;-0.8"), check,
			`samples.csv:3: expected 4 fields like the header, got 1; this row is semicolon-separated, the header comma-separated`},
		{"CSV duplicate sample", samples("c2,control", "c1,control"), check,
			`samples.csv:3: sample: sample "c1" already has a value of foliage on line 2`},
		{"CSV non-numeric value", samples("t1,fert,foliage,1.1", "t1,fert,foliage,one"), check,
			`samples.csv:4: value: expected a number, got "one"`},
		{"CSV enriched value", samples("t1,fert,foliage,1.1", "t1,fert,foliage,150"), check,
			"samples.csv:4: value: δ15N 150 ‰ is beyond natural abundance (|δ| > 100 ‰); use --allow-enriched for a tracer study"},
		{"CSV row longer than the header", samples("t1,fert,foliage,1.1", "t1,fert,foliage,1.1,A"), check,
			"samples.csv:4: expected 4 fields like the header, got 5"},
		{"CSV single sample", samples("t2,fert,foliage,0.7\n", ""), check,
			`samples.csv:4: group: group "fert" has only one sample of foliage; a standard error needs n ≥ 2`},
		{"CSV empty", func(*testing.T) map[string]string {
			return map[string]string{"study.yaml": csvStudy, "samples.csv": ""}
		}, check, "samples.csv:1: the samples file is empty; expected a header row sample,group,observable,value"},
		{"CSV missing", studyOnly(func(*testing.T) string { return csvStudy }), check,
			"study.yaml:4: samples: cannot read samples file samples.csv: no such file or directory"},
		// Site files (DESIGN §3), through simulate --site FILE.
		{"unknown site key", site("site: small\n", "site: small\nsoil_ph: 5\n"), simulate,
			"site.yaml:2: soil_ph: unknown key (keys here: site, description, references, note, mycorrhizal_type, land_use, pools, nitrate_oxygen, inputs, transfers)"},
		{"unknown transfer key", site("nitrate, rate: 10}", "nitrate, rat: 10}"), simulate,
			"site.yaml:11: transfers[1].rat: unknown key (keys here: process, from, to, rate, epsilon, epsilon18, spread)"},
		{"unknown pool", site("  plant: 100\n", "  plant: 100\n  litter: 30\n"), simulate,
			`site.yaml:7: pools.litter: unknown pool "litter" (pools: organic, ammonium, nitrate, plant, fungi, foliage, forest-floor, n2o)`},
		{"unknown pool in a transfer", site("to: plant, rate: 15", "to: plants, rate: 15"), simulate,
			`site.yaml:12: transfers[2].to: unknown pool "plants" (expected a defined pool or out: organic, ammonium, nitrate, plant)`},
		{"negative rate", site("rate: 10}", "rate: -10}"), simulate,
			"site.yaml:11: transfers[1].rate: rate must be a non-negative number of kg N/ha/yr, got -10"},
		{"rate beyond any site", site("rate: 5, d15n", "rate: 1e9, d15n"), simulate,
			"site.yaml:8: inputs[0].rate: rate must be 0 or between 1e-09 and 1e+06 kg N/ha/yr, got 1e+09"},
		{"negative pool", site("  nitrate: 2\n", "  nitrate: -2\n"), simulate,
			"site.yaml:5: pools.nitrate: pool size must be a non-negative number of kg N/ha, got -2"},
		{"missing required pool", site("  nitrate: 2\n", ""), simulate,
			`site.yaml:3: pools.nitrate: missing required pool "nitrate"`},
		{"pool with no way out", site("  plant: 100\n", "  plant: 100\n  fungi: 2\n",
			"transfers:\n", "transfers:\n  - {process: mycorrhizal-uptake, from: ammonium, to: fungi, rate: 1}\n"), simulate,
			`site.yaml:7: pools.fungi: pool "fungi" has no way out: no transfer draws from it, so there is no steady state`},
		{"pool receiving nothing", site("  plant: 100\n", "  plant: 100\n  fungi: 2\n",
			"transfers:\n", "transfers:\n  - {process: fungal-turnover, from: fungi, to: organic, rate: 1}\n"), simulate,
			`site.yaml:7: pools.fungi: pool "fungi" receives no N from any input: at steady state it is empty and its δ15N undefined`},
		{"unknown process", site("process: uptake-nitrate", "process: nitrate-uptake"), simulate,
			`site.yaml:13: transfers[3].process: unknown process "nitrate-uptake" (processes: {processes})`},
		{"unknown source of an input", site("{to: ammonium, rate: 5, d15n: -1}", "{source: guano, rate: 5}"), simulate,
			`site.yaml:8: inputs[0].source: unknown source "guano" (sources: {sources})`},
		{"input δ18O not a number", site("  - {to: ammonium, rate: 5, d15n: -1}\n", "  - {to: ammonium, rate: 5, d15n: -1}\n  - {to: nitrate, rate: 1, d15n: 2, d18o: .nan}\n"), simulate,
			"site.yaml:9: inputs[1].d18o: δ18O NaN ‰ is outside natural abundance (|δ| ≤ 100 ‰)"},
		{"implausible ε", site("rate: 2}", "rate: 2, epsilon: 250}"), simulate,
			"site.yaml:14: transfers[4].epsilon: ε 250 ‰ is implausible (|ε| < 200 ‰ expected)"},
		{"ill-conditioned site", func(*testing.T) map[string]string { return map[string]string{"site.yaml": illConditioned} }, simulate,
			`site.yaml:6: transfers: site "nearly-closed" is numerically ill-conditioned: the 14N steady-state system has condition number 8e+12 (limit 1e+11); check for pools that barely exchange with the rest or rates many orders of magnitude apart`},
		{"ill-conditioned site file of a study", func(*testing.T) map[string]string {
			return map[string]string{"study.yaml": siteStudy, "site.yaml": illConditioned}
		}, check,
			`site.yaml:6: transfers: site "nearly-closed" is numerically ill-conditioned: the 14N steady-state system has condition number 8e+12 (limit 1e+11); check for pools that barely exchange with the rest or rates many orders of magnitude apart`},
		{"bad site file of a study", func(t *testing.T) map[string]string {
			return map[string]string{"study.yaml": siteStudy, "site.yaml": edit(t, badSite, "rate: 10}", "rate: -10}")}
		}, check, "site.yaml:11: transfers[1].rate: rate must be a non-negative number of kg N/ha/yr, got -10"},
		{"unknown template for simulate", nil, []string{"simulate", "--site", "rainforest"},
			"rainforest: no built-in site template or file of that name (templates: {templates})"},
		// explain reads input the same way.
		{"explain: negative sd", study("foliage: {mean: -1.0, sd: 0.6", "foliage: {mean: -1.0, sd: -0.6"), []string{"explain", "study.yaml"},
			"study.yaml:15: groups.control.foliage.sd: sd must be a number ≥ 0, got -0.6"},
		{"explain: CSV duplicate sample", samples("c2,control", "c1,control"), []string{"explain", "--format", "json", "study.yaml"},
			`samples.csv:3: sample: sample "c1" already has a value of foliage on line 2`},
	}
}

// knowledgeLists fills the {sources}, {templates} and {processes}
// placeholders from the knowledge base.
func knowledgeLists(kb *knowledge.Base) *strings.Replacer {
	var sources []string
	for _, s := range kb.Sources {
		sources = append(sources, s.ID)
	}
	return strings.NewReplacer(
		"{sources}", strings.Join(sources, ", "),
		"{templates}", strings.Join(kb.SiteIDs(), ", "),
		"{processes}", strings.Join(knowledge.Processes, ", "))
}

func TestBadInput(t *testing.T) {
	lists := knowledgeLists(knowledge.MustDefault())
	cases := badCases()
	if len(cases) < 20 {
		t.Fatalf("the table has %d cases; issue 5 asks for at least 20", len(cases))
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			t.Chdir(dir)
			var inputs []string
			if tc.files != nil {
				for name, text := range tc.files(t) {
					if err := os.WriteFile(name, []byte(text), 0o644); err != nil {
						t.Fatal(err)
					}
					inputs = append(inputs, name)
				}
			}
			var out, errb bytes.Buffer
			code := runEnv(&env{stdout: &out, stderr: &errb}, tc.args)
			if code != exitBadInput {
				t.Errorf("exit code %d, want %d (bad input)", code, exitBadInput)
			}
			if want := "nlens: " + lists.Replace(tc.want) + "\n"; errb.String() != want {
				t.Errorf("stderr\n got: %q\nwant: %q", errb.String(), want)
			}
			if out.Len() > 0 {
				t.Errorf("stdout should be empty, got %q", out.String())
			}
			assertOnlyFiles(t, dir, inputs)
		})
	}
}

// assertOnlyFiles fails when dir holds anything but the named files.
func assertOnlyFiles(t *testing.T, dir string, names []string) {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if !slices.Contains(names, e.Name()) {
			t.Errorf("bad input left a file behind: %s", e.Name())
		}
	}
}

// The enriched values refused above are accepted with --allow-enriched, and
// check then prints the shift: 140 − (−1.0) = +141 ‰ for the group means,
// and for the CSV (150 + 0.7)/2 − (−1.2 − 0.8)/2 = 75.35 + 1.0 = +76.35 ‰
// (hand computation).
func TestAllowEnrichedAccepted(t *testing.T) {
	tests := []struct {
		name  string
		files map[string]string
		want  string
	}{
		{"group means", map[string]string{"study.yaml": strings.Replace(badStudy, "foliage: {mean: 1.0, sd: 0.8", "foliage: {mean: 140, sd: 0.8", 1)}, "+141.00"},
		{"samples CSV", map[string]string{"study.yaml": csvStudy, "samples.csv": strings.Replace(badSamples, "t1,fert,foliage,1.1", "t1,fert,foliage,150", 1)}, "+76.35"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			dir := t.TempDir()
			t.Chdir(dir)
			for name, text := range tt.files {
				if err := os.WriteFile(name, []byte(text), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			var out, errb bytes.Buffer
			if code := runEnv(&env{stdout: &out, stderr: &errb}, []string{"check", "--allow-enriched", "study.yaml"}); code != exitOK {
				t.Fatalf("exit code %d, want 0; stderr %s", code, errb.String())
			}
			if !strings.Contains(out.String(), tt.want) {
				t.Errorf("check output should show the shift %s:\n%s", tt.want, out.String())
			}
		})
	}
}
