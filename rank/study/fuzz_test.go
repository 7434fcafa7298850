package study

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
	"nlens/rank/study/sampletest"
)

// Fuzzing the study file and samples CSV parsers (issue 5, item 3).
//
// Run each for a minute with
//
//	go test ./rank/study -run '^$' -fuzz '^FuzzParseStudy$' -fuzztime 60s -fuzzminimizetime 5s
//	go test ./rank/study -run '^$' -fuzz '^FuzzParseSamples$' -fuzztime 60s -fuzzminimizetime 5s
//
// The seed corpora are committed in testdata/fuzz/FuzzParseStudy/ and
// testdata/fuzz/FuzzParseSamples/: the files named "seed-*" are written
// from fuzzStudySeeds and fuzzSamplesSeeds by
//
//	go test ./rank/study -run '^TestFuzz.*SeedCorpus$' -update-corpus
//
// and any other file there is an input that once failed, kept as a
// regression case.
//
// The property, for every input:
//
//   - the parser never panics;
//   - a rejection is a positioned error: errors.As finds a
//     *input.Error, and every InputError names one of the files
//     involved (the study, the site file or the samples CSV it refers to)
//     and says what is wrong, with a 1-based line that is not past the end
//     of that file's text. Line may be 0 only where no line is to blame:
//     a YAML file with no content at all (only blanks, comments and a
//     byte-order mark). A file the study names but that cannot be read is
//     reported in the study, at the key naming it. A CSV error always has
//     a line: an empty samples file is reported at line 1, where its
//     header belongs;
//   - an accepted input holds only finite numbers: every group mean, sd,
//     shift, standard error and degrees of freedom; the additions' rates
//     and δ values; the context numbers.

var updateCorpus = flag.Bool("update-corpus", false, "rewrite the seed-* files of the fuzz corpora in testdata/fuzz")

// Names the fuzz targets give their inputs and the files a fuzzed study
// can refer to (relative to the study, which sits in the working
// directory).
const (
	fuzzStudyFile   = "fuzz-study.yaml"
	fuzzSiteFile    = "site.yaml"
	fuzzSamplesFile = "samples.csv"
	fuzzCSVFile     = "fuzz-samples.csv"
)

// fuzzSite is the site file a fuzzed study may name (site: {file:
// site.yaml}): a small valid site with fungi and foliage pools (invented,
// balanced numbers).
const fuzzSite = `site: fuzz-site
pools: {organic: 1000, ammonium: 5, nitrate: 2, plant: 100, fungi: 2, foliage: 20}
inputs:
  - {to: ammonium, rate: 5, d15n: -1}
  - {source: nitrate-fertilizer, rate: 1}
transfers:
  - {process: mineralization, from: organic, to: ammonium, rate: 20}
  - {process: nitrification, from: ammonium, to: nitrate, rate: 10}
  - {process: uptake-ammonium, from: ammonium, to: plant, rate: 12}
  - {process: mycorrhizal-uptake, from: ammonium, to: fungi, rate: 3}
  - {process: mycorrhizal-transfer, from: fungi, to: plant, rate: 3}
  - {process: uptake-nitrate, from: nitrate, to: plant, rate: 9}
  - {process: denitrification, from: nitrate, to: out, rate: 2}
  - {process: allocation, from: plant, to: foliage, rate: 10}
  - {process: litterfall, from: foliage, to: organic, rate: 10}
  - {process: litterfall, from: plant, to: organic, rate: 14}
  - {process: leaching-organic, from: organic, to: out, rate: 4}
`

// fuzzSamples is the samples CSV a fuzzed study may name (samples:
// samples.csv); invented values.
const fuzzSamples = "sample,group,observable,value,unit,depth_cm\n" +
	"c1,control,foliage,-1.2,‰,\n" +
	"c2,control,foliage,-0.8,‰,\n" +
	"c3,control,soil,4.1,,0-10\n" +
	"c4,control,soil,3.9,,0-10\n" +
	"t1,fert,foliage,1.1,permil,\n" +
	"t2,fert,foliage,0.7,permil,\n" +
	"t3,fert,soil,4.4,,10\n" +
	"t4,fert,soil,4.0,,10\n" +
	"t5,fert,pool:nitrate,3.5,kg N/ha,\n" +
	"t6,fert,pool:nitrate,4.5,kg N/ha,\n"

// fuzzFiles are the files readFile serves to a fuzzed study.
var fuzzFiles = map[string]string{fuzzSiteFile: fuzzSite, fuzzSamplesFile: fuzzSamples}

func fuzzReadFile(name string) ([]byte, error) {
	if v, ok := fuzzFiles[name]; ok {
		return []byte(v), nil
	}
	return nil, &os.PathError{Op: "open", Path: name, Err: os.ErrNotExist}
}

func FuzzParseStudy(f *testing.F) {
	kb := knowledge.MustDefault()
	f.Fuzz(func(t *testing.T, data []byte, allowEnriched bool) {
		st, err := Parse(fuzzStudyFile, data, kb, Options{AllowEnriched: allowEnriched}, fuzzReadFile)
		if err != nil {
			if st != nil {
				t.Errorf("Parse returned a study and an error: %v", err)
			}
			texts := map[string][]byte{fuzzStudyFile: data}
			for name, text := range fuzzFiles {
				texts[name] = []byte(text)
			}
			checkPositioned(t, err, texts)
			return
		}
		checkStudyFinite(t, st)
	})
}

func FuzzParseSamples(f *testing.F) {
	// Sites the rows are checked against: none (the study's site failed),
	// a template with a fungi pool and one without.
	sites := fuzzSites(f)
	f.Fuzz(func(t *testing.T, data []byte, allowEnriched bool, siteChoice byte) {
		site := sites[int(siteChoice)%len(sites)]
		groups, _, err := ParseSamples(fuzzCSVFile, data, site, Options{AllowEnriched: allowEnriched})
		if err != nil {
			if groups != nil {
				t.Errorf("ParseSamples returned groups and an error: %v", err)
			}
			checkMessageClean(t, err)
			if fileKind(fuzzCSVFile, data) != "csv" {
				return // a workbook (zip) or an old .xls: checked by FuzzParseSpreadsheet
			}
			checkPositioned(t, err, map[string][]byte{fuzzCSVFile: data})
			for _, e := range input.Flatten(err) {
				if e.Line == 0 {
					t.Errorf("CSV error without a line: %v", e)
				}
			}
			return
		}
		for _, g := range groups {
			if !finite(g.Mean) || !finite(g.SD) || g.SD < 0 || g.N < 2 || g.Line < 1 {
				t.Errorf("accepted group %+v", g)
			}
		}
	})
}

// checkPositioned holds a rejection to the rule in the comment at the top:
// texts maps each file an error may name to its text.
func checkPositioned(t *testing.T, err error, texts map[string][]byte) {
	t.Helper()
	var first *input.Error
	if !errors.As(err, &first) {
		t.Fatalf("rejection is not a *input.Error: %T %v", err, err)
	}
	for _, e := range input.Flatten(err) {
		text, known := texts[e.File]
		lines := inputtest.LineCount(text)
		switch {
		case !known:
			t.Errorf("error names file %q, which is none of the inputs: %v", e.File, e)
		case e.Msg == "":
			t.Errorf("error says nothing: %#v", e)
		case e.Line < 0 || e.Line > lines+1:
			t.Errorf("error line %d is outside the %d-line text of %s: %v", e.Line, lines, e.File, e)
		case e.Line == 0 && !inputtest.YAMLBlank(text):
			t.Errorf("error has no line although %s has content: %v", e.File, e)
		}
	}
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// checkStudyFinite fails on any NaN or infinity in an accepted study.
func checkStudyFinite(t *testing.T, st *Study) {
	t.Helper()
	bad := func(what string, v float64) {
		if !finite(v) {
			t.Errorf("accepted study has %s = %g", what, v)
		}
	}
	if st.Site == nil {
		t.Fatal("accepted study has no site")
	}
	if p := st.Context.SoilPH; p != nil {
		bad("soil_ph", *p)
	}
	if p := st.Context.PrecipMM; p != nil {
		bad("mean_annual_precip_mm", *p)
	}
	for i, c := range st.Comparisons {
		name := fmt.Sprintf("comparisons[%d]", i)
		if c.Years != nil {
			bad(name+".years", *c.Years)
		}
		for k, a := range c.Additions {
			an := fmt.Sprintf("%s.additions[%d]", name, k)
			bad(an+".rate", a.RateKgPerHaYr)
			if a.D15N != nil {
				bad(an+".d15n", *a.D15N)
			}
			if a.D18O != nil {
				bad(an+".d18o", *a.D18O)
			}
		}
		if len(c.Observed) == 0 {
			t.Errorf("accepted %s has no observed shift", name)
		}
		for _, o := range c.Observed {
			on := name + " " + o.Observable
			bad(on+" shift", o.Shift)
			bad(on+" se", o.SE)
			bad(on+" df", o.DF)
			if !(o.DF > 0) {
				t.Errorf("accepted %s has degrees of freedom %g", on, o.DF)
			}
			for _, g := range []struct {
				role string
				s    Stat
			}{{"control", o.Control}, {"treatment", o.Treatment}} {
				bad(on+" "+g.role+" mean", g.s.Mean)
				bad(on+" "+g.role+" sd", g.s.SD)
				if g.s.N < 2 {
					t.Errorf("accepted %s %s has n = %d", on, g.role, g.s.N)
				}
			}
		}
	}
}

// fuzzStudySeeds are the seed inputs of FuzzParseStudy: valid studies (the
// one of study_test.go, the demo study's shape, one with a site file and
// samples) and hostile or malformed text. Each value is the study text and
// the AllowEnriched option.
func fuzzStudySeeds() map[string][]any {
	const small = "site: {template: dryland-shrubland, soil_ph: 8.1, drainage: well}\n" +
		"comparisons:\n" +
		"  - {name: urea vs control, control: control, treatment: urea, years: 4, management: [fertilized],\n" +
		"     additions: [{source: urea, rate: 60, d15n: -1.2}]}\n" +
		"groups:\n" +
		"  control:\n" +
		"    foliage: {mean: 1.1, sd: 0.7, n: 6}\n" +
		"    soil: {mean: 5.2, sd: 0.5, n: 6}\n" +
		"  urea:\n" +
		"    foliage: {mean: 3.4, sd: 0.9, n: 6}\n" +
		"    soil: {mean: 5.0, sd: 0.6, n: 6}\n"
	const withFiles = "title: site file and samples\n" +
		"site: {file: site.yaml, mycorrhizal_type: ecto, mean_annual_precip_mm: 900}\n" +
		"comparisons:\n" +
		"  - {control: control, treatment: fert, years: 2}\n" +
		"  - name: nitrate fertilizer\n" +
		"    control: control\n" +
		"    treatment: fert\n" +
		"    additions: [{source: nitrate-fertilizer, rate: 40, d15n: 0.5, d18o: 22}]\n" +
		"samples: samples.csv\n"
	rep := func(s string, oldnew ...string) []byte { return []byte(strings.NewReplacer(oldnew...).Replace(s)) }
	seeds := map[string][]any{
		"good":       {[]byte(goodStudy), false},
		"small":      {[]byte(small), false},
		"with-files": {[]byte(withFiles), false},
		// GO-NOTES §4: this input panics gopkg.in/yaml.v3 v3.0.1.
		"yaml-crasher":   {[]byte("\na:\n<<:\n-\n?\n-\n"), false},
		"empty":          {[]byte{}, false},
		"blank":          {[]byte("\n  \n# nothing\n"), false},
		"bom":            {append([]byte("\ufeff"), small...), false},
		"tab-indent":     {rep(small, "    foliage: {mean: 1.1", "\tfoliage: {mean: 1.1"), false},
		"huge-numbers":   {rep(small, "mean: 1.1", "mean: 1e308", "sd: 0.9", "sd: 1.7e308", "n: 6}", "n: 9223372036854775807}"), true},
		"tiny-numbers":   {rep(small, "mean: 1.1", "mean: 5e-324", "sd: 0.9", "sd: 1e-310"), false},
		"nan-inf":        {rep(small, "mean: 1.1", "mean: .nan", "sd: 0.9", "sd: .inf", "d15n: -1.2", "d15n: -.inf"), true},
		"enriched":       {rep(small, "mean: 3.4", "mean: 350"), false},
		"enriched-ok":    {rep(small, "mean: 3.4", "mean: 350", "d15n: -1.2", "d15n: 2500"), true},
		"pool-extremes":  {rep(goodStudy, "pool:nitrate: {mean: 1.5", "pool:nitrate: {mean: 1e-320", "pool:nitrate: {mean: 4.5", "pool:nitrate: {mean: 1e300"), false},
		"duplicate-key":  {[]byte(small + "groups: {}\n"), false},
		"duplicate-obs":  {rep(small, "    soil: {mean: 5.2, sd: 0.5, n: 6}\n", "    soil: {mean: 5.2, sd: 0.5, n: 6}\n    soil: {mean: 5, sd: 1, n: 3}\n"), false},
		"anchors":        {[]byte("site: {template: temperate-grassland}\ncomparisons: [{control: a, treatment: b, years: 2}]\ngroups:\n  a: &g {foliage: {mean: 1, sd: 1, n: 3}}\n  b: {<<: *g, soil: {mean: 2, sd: 1, n: 3}}\n"), false},
		"merge-scalar":   {[]byte("site: {template: temperate-grassland}\ngroups:\n  a: &g 5\n  b: {<<: *g}\n"), false},
		"alias-loop":     {[]byte("site: &s {template: *s}\n"), false},
		"unknown-anchor": {[]byte("site: {template: dryland-shrubland}\ngroups: *nowhere\n"), false},
		"billion-laughs": {[]byte("groups: &a {x: &b [1, 2, 3, 4, 5, 6, 7, 8, 9]}\nsite: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b]\ntitle: [*c, *c, *c, *c, *c, *c, *c, *c, *c]\n"), false},
		"deep-nesting":   {[]byte("groups: " + strings.Repeat("{a: ", 300) + "1" + strings.Repeat("}", 300) + "\n"), false},
		"deep-lists":     {[]byte("comparisons: " + strings.Repeat("[", 3000) + strings.Repeat("]", 3000) + "\n"), false},
		"complex-key":    {[]byte("site: {template: dryland-shrubland}\n? [a, b]\n: 1\n"), false},
		"two-documents":  {[]byte(small + "---\n" + small), false},
		"top-level-list": {[]byte("- site\n- groups\n"), false},
		"invalid-utf8":   {[]byte("title: \xc3\x28\n"), false},
		"site-both":      {rep(small, "template: dryland-shrubland", "template: dryland-shrubland, file: site.yaml"), false},
		"site-missing":   {rep(small, "site: {template: dryland-shrubland, soil_ph: 8.1, drainage: well}\n", ""), false},
		"site-csv":       {rep(withFiles, "file: site.yaml", "file: samples.csv"), false},
		"samples-yaml":   {rep(withFiles, "samples: samples.csv", "samples: site.yaml"), false},
		"samples-absent": {rep(withFiles, "samples: samples.csv", "samples: ../elsewhere/rows.csv"), false},
		"bad-addition":   {rep(small, "{source: urea, rate: 60, d15n: -1.2}", "{source: urea, rate: 60, d15n: -1.2, d18o: .nan}"), true},
		"crlf":           {[]byte(strings.ReplaceAll(small, "\n", "\r\n")), false},
	}
	return seeds
}

// fuzzSamplesSeeds are the seed inputs of FuzzParseSamples: the CSV text,
// AllowEnriched and the site choice (0 none, 1 a site with fungi, 2 one
// without).
func fuzzSamplesSeeds() map[string][]any {
	const header = "sample,group,observable,value\n"
	seeds := map[string][]any{
		"good":             {[]byte(fuzzSamples), false, byte(1)},
		"good-no-site":     {[]byte(fuzzSamples), false, byte(0)},
		"d15n-column":      {[]byte("sample,group,observable,d15n,species,note\ns1,a,foliage,1,Acer,\"a, note\"\ns2,a,foliage,2,Acer,\n"), false, byte(1)},
		"empty":            {[]byte{}, false, byte(1)},
		"comments-first":   {[]byte("# exported 2026-01-02\n\n" + header + "s1,a,soil,1\ns2,a,soil,2\n"), false, byte(1)},
		"header-only":      {[]byte(header), false, byte(1)},
		"bom":              {[]byte("\ufeff" + header + "s1,a,soil,1\ns2,a,soil,2\n"), false, byte(1)},
		"tabs":             {[]byte("sample\tgroup\tobservable\tvalue\ns1\ta\tsoil\t1\n"), false, byte(1)},
		"semicolons":       {[]byte("sample;group;observable;value\ns1;a;soil;1,5\n"), false, byte(1)},
		"bare-quote":       {[]byte(header + "a\"b,a,soil,1\n"), false, byte(1)},
		"open-quote":       {[]byte(header + "s1,a,soil,\"1.2\ns2,a,soil,1\n"), false, byte(1)},
		"quoted-newline":   {[]byte(header + "\"s\n1\",a,soil,1\ns2,a,soil,2\n"), false, byte(1)},
		"duplicate-sample": {[]byte(header + "s1,a,soil,1\ns1,a,soil,2\n"), false, byte(1)},
		"non-numeric":      {[]byte(header + "s1,a,soil,one\ns2,a,soil,2\n"), false, byte(1)},
		"nan-inf":          {[]byte(header + "s1,a,soil,NaN\ns2,a,soil,+Inf\ns3,a,soil,-infinity\n"), true, byte(1)},
		"hex-float":        {[]byte(header + "s1,a,soil,0x1p-2\ns2,a,soil,0x1.8p1\n"), false, byte(1)},
		"huge-pool":        {[]byte(header + "s1,a,pool:nitrate,1.7e308\ns2,a,pool:nitrate,1.7e308\n"), false, byte(1)},
		"huge-spread":      {[]byte(header + "s1,a,pool:plant,1e300\ns2,a,pool:plant,1e-300\n"), false, byte(1)},
		"huge-enriched":    {[]byte(header + "s1,a,foliage,1e308\ns2,a,foliage,-1e308\n"), true, byte(1)},
		"enriched":         {[]byte(header + "s1,a,foliage,150\ns2,a,foliage,160\n"), false, byte(1)},
		"impossible-delta": {[]byte(header + "s1,a,foliage,-1500\ns2,a,foliage,-1600\n"), true, byte(1)},
		"missing-column":   {[]byte("sample,group,value\ns1,a,1\n"), false, byte(1)},
		"unknown-column":   {[]byte("sample,group,observable,value,colour\ns1,a,soil,1,red\n"), false, byte(1)},
		"duplicate-column": {[]byte("sample,group,observable,value,d15n\ns1,a,soil,1,1\n"), false, byte(1)},
		"short-row":        {[]byte(header + "s1,a,soil\n"), false, byte(1)},
		"long-row":         {[]byte(header + "s1,a,soil,1,extra\ns2,a,soil,2\n"), false, byte(1)},
		"unknown-obs":      {[]byte(header + "s1,a,needles,1\n"), false, byte(1)},
		"missing-pool":     {[]byte(header + "s1,a,fungi,1\ns2,a,fungi,2\n"), false, byte(2)},
		"bad-unit":         {[]byte("sample,group,observable,value,unit\ns1,a,soil,1,mg\n"), false, byte(1)},
		"mixed-units":      {[]byte("sample,group,observable,value,unit\ns1,a,pool:nitrate,1,kg N/ha\ns2,a,pool:nitrate,2,g N/m2\n"), false, byte(1)},
		"depths":           {[]byte("sample,group,observable,value,depth_cm\ns1,a,soil,1,0-10\ns2,a,soil,2,10–20\ns3,a,soil,2,deep\n"), false, byte(1)},
		"one-sample":       {[]byte(header + "s1,a,soil,1\n"), false, byte(1)},
		"crlf":             {[]byte(strings.ReplaceAll(fuzzSamples, "\n", "\r\n")), false, byte(1)},
		"invalid-utf8":     {[]byte(header + "s1,\xff,soil,1\ns2,\xff,soil,2\n"), false, byte(1)},
		"nul":              {[]byte(header + "s1,a\x00,soil,1\n"), false, byte(1)},
	}
	// Dialects (issue 14): the lab table of dialect_test.go as each is
	// written, and the ambiguous files.
	semi := sampletest.CSV(labRows, sampletest.CSVOptions{Separator: ';', DecimalComma: true})
	dialects := map[string][]byte{
		"semicolon-decimal-comma": semi,
		"bom-quoted-header":       sampletest.CSV(labRows, sampletest.CSVOptions{Encoding: sampletest.UTF8BOM, QuoteHeader: true}),
		"utf16le-tabs":            sampletest.CSV(labRows, sampletest.CSVOptions{Separator: '\t', Encoding: sampletest.UTF16LE, LineEnd: "\r\n"}),
		"utf16be":                 sampletest.CSV(labRows, sampletest.CSVOptions{Encoding: sampletest.UTF16BE}),
		"utf16-no-bom":            sampletest.CSV(labRows, sampletest.CSVOptions{Encoding: sampletest.UTF16LE})[2:],
		"utf16-odd":               sampletest.CSV(labRows, sampletest.CSVOptions{Encoding: sampletest.UTF16LE})[:101],
		"cr-only":                 sampletest.CSV(labRows, sampletest.CSVOptions{LineEnd: "\r"}),
		"windows-1252":            []byte(strings.ReplaceAll(string(semi), "permil", "\x89")),
		"mixed-decimal-marks":     []byte(strings.Replace(string(semi), "4,25", "4.25", 1)),
		"two-separators":          []byte("sample,group,observable,value\nsample;group;observable;value\ns1;a;soil;1\n"),
		"atom-percent-depths":     []byte("sample,group,observable,value,unit,depth_cm,horizon\ns1,a,soil,0.3665,atom%,-5-0,Oa\ns2,a,soil,0.3668,at%,0-10,A\ns3,a,soil,0.3662,atom %,,Oi\n"),
		"zip-magic":               []byte("PK\x03\x04\x14\x00"),
		"xls-magic":               {0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1},
		"escape-in-header":        []byte("sample,group,observable,value,\x1b[31mred\n"),
	}
	for name, data := range dialects {
		seeds[name] = []any{data, false, byte(1)}
	}
	return seeds
}

// TestFuzzStudySeedCorpus and TestFuzzSamplesSeedCorpus keep the committed
// seed corpora in step with the seed tables (rewrite with -update-corpus).
func TestFuzzStudySeedCorpus(t *testing.T) {
	inputtest.SyncSeedCorpus(t, filepath.Join("testdata", "fuzz", "FuzzParseStudy"), fuzzStudySeeds(), *updateCorpus)
}

func TestFuzzSamplesSeedCorpus(t *testing.T) {
	inputtest.SyncSeedCorpus(t, filepath.Join("testdata", "fuzz", "FuzzParseSamples"), fuzzSamplesSeeds(), *updateCorpus)
}
