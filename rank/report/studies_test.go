package report

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"nlens/rank"
	"nlens/rank/study"
	"nlens/rules"
)

// The studies in testdata/studies are invented (made-up numbers): a
// clear-cut and a fire (two comparisons), urea on a grassland, a clear-cut
// sampled in three years as a series, and a pattern no candidate can
// produce. They are explained by the engine, so these tests read what a
// user would receive.

var studyResults sync.Map // name → *rank.Result

func studyResult(t *testing.T, name string) *rank.Result {
	t.Helper()
	return studyFileResult(t, filepath.Join("testdata", "studies", name+".yaml"))
}

// studyFileResult explains a study file once per test binary.
func studyFileResult(t *testing.T, path string) *rank.Result {
	t.Helper()
	if r, ok := studyResults.Load(path); ok {
		return r.(*rank.Result)
	}
	kb := testKB(t)
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	st, err := study.Parse(path, data, kb, study.Options{}, os.ReadFile)
	if err != nil {
		t.Fatal(err)
	}
	set, err := rules.Default(kb)
	if err != nil {
		t.Fatal(err)
	}
	// 16 draws and a fixed seed keep the tests quick; the wording rules do
	// not depend on the precision of the posteriors.
	r, err := rank.Explain(context.Background(), st, kb, set, rank.Options{Seed: 2, Draws: 16, MaxDraws: 16, Version: "test"})
	if err != nil {
		t.Fatal(err)
	}
	studyResults.Store(path, r)
	return r
}

func render(t *testing.T, r *rank.Result, format string) string {
	t.Helper()
	var b bytes.Buffer
	if err := WriteExplain(&b, r, testKB(t), format); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

// E-mails keep to issue 13's limits on real results: one comparison in
// 100–250 words, several comparisons or a series in at most 400; the
// known treatment is named and every caution is there.
func TestEmailLimitsOnStudies(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	demo := filepath.Join("..", "..", "testdata", "demo", "study.yaml")
	for _, tc := range []struct {
		name     string
		min, max int
		treat    []string
	}{
		{"demo", 100, emailMaxOne, []string{"ammonium nitrate fertilizer at 60 kg N/ha per year"}},
		{"fertilizer", 100, emailMaxOne, []string{"urea fertilizer at 120 kg N/ha per year"}},
		{"clearcut", 100, emailMaxMany, []string{"clear-cut harvest", "fire of moderate severity"}},
		{"series", 100, emailMaxMany, []string{"clear-cut harvest", "series “cut”"}},
		{"nofit", 100, emailMaxOne, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var r *rank.Result
			if tc.name == "demo" {
				r = studyFileResult(t, demo)
			} else {
				r = studyResult(t, tc.name)
			}
			got := render(t, r, FormatText)
			n := words([]string{got})
			t.Logf("%s: %d words", tc.name, n)
			if n < tc.min || n > tc.max {
				t.Errorf("%d words, want %d–%d:\n%s", n, tc.min, tc.max, got)
			}
			flat := strings.Join(strings.Fields(got), " ")
			for _, want := range append(tc.treat,
				"δ15N evidence is indicative, not proof",
				"isotope effects nlens assumes and on the site model",
				"several lines of evidence, local regulations and licensed professionals") {
				if !strings.Contains(flat, want) {
					t.Errorf("the e-mail lacks %q:\n%s", want, got)
				}
			}
			for _, bad := range []string{"1 years", "1 bits", "the a ", "= none", "× rate", "small relative to"} {
				if strings.Contains(flat, bad) {
					t.Errorf("the e-mail holds %q:\n%s", bad, got)
				}
			}
		})
	}
}

// When no candidate fits, every format says so before any ranking and
// before any measurement advice (issue 13, item 3).
func TestNoFitComesFirst(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	r := studyResult(t, "nofit")
	if !r.Comparisons[0].NoFit {
		t.Fatalf("the impossible pattern fits (p = %g): the test study no longer tests the no-fit order", r.Comparisons[0].Hypotheses[0].Fit.P)
	}
	top := r.Comparisons[0].Hypotheses[0]
	for _, tc := range []struct {
		format, warning string
		ranking         []string
	}{
		{FormatText, "No candidate fits", []string{"closest explanation", "measure"}},
		{FormatTable, "WARNING: No candidate fits", []string{"Explanations, most probable first", "Next measurements"}},
		{FormatMarkdown, "No candidate fits", []string{"## Summary", "### Explanations", "### Next measurements"}},
	} {
		t.Run(tc.format, func(t *testing.T) {
			got := render(t, r, tc.format)
			i := strings.Index(got, tc.warning)
			if i < 0 {
				t.Fatalf("no %q in the %s output:\n%s", tc.warning, tc.format, got)
			}
			for _, later := range append(tc.ranking, top.Label) {
				if j := strings.Index(got, later); j >= 0 && j < i {
					t.Errorf("%q comes before the no-fit warning in %s", later, tc.format)
				}
			}
		})
	}
	t.Run("json", func(t *testing.T) {
		got := render(t, r, FormatJSON)
		var doc struct {
			NoFit []string `json:"no_fit"`
		}
		if err := json.Unmarshal([]byte(got), &doc); err != nil {
			t.Fatal(err)
		}
		if len(doc.NoFit) != 1 {
			t.Errorf("no_fit holds %d statements, want 1", len(doc.NoFit))
		}
		// Field order: the statement before the comparisons, and each
		// comparison's flag before its hypotheses.
		if i, j := strings.Index(got, `"no_fit"`), strings.Index(got, `"comparisons"`); i > j {
			t.Error(`"no_fit" comes after "comparisons"`)
		}
		if i, j := strings.Index(got, `"no_candidate_fits": true`), strings.Index(got, `"hypotheses"`); i < 0 || i > j {
			t.Error(`"no_candidate_fits": true missing or after "hypotheses"`)
		}
	})
}

// Every format carries the cautions (DESIGN: reports can steer decisions).
func TestCautionsInEveryFormat(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	r := studyResult(t, "clearcut")
	for _, f := range ExplainFormats {
		got := strings.Join(strings.Fields(render(t, r, f)), " ")
		for _, want := range []string{"indicative, not proof", "licensed professionals"} {
			if !strings.Contains(got, want) {
				t.Errorf("%s output lacks %q", f, want)
			}
		}
	}
}

// Many comparisons still make an e-mail of at most 400 words: the
// paragraphs shorten, then the last ones are left to the report, which the
// closing says.
func TestEmailManyComparisons(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	base := studyResult(t, "clearcut")
	r := *base
	r.Comparisons = nil
	for i := range 4 {
		for _, c := range base.Comparisons {
			c.Name = c.Name + " " + strings.Repeat("I", i+1)
			r.Comparisons = append(r.Comparisons, c)
		}
	}
	got := render(t, &r, FormatText)
	t.Logf("8 comparisons: %d words, %d summarised", words([]string{got}), strings.Count(got, "\nIn “"))
	if n := words([]string{got}); n > emailMaxMany {
		t.Errorf("8 comparisons in %d words, want ≤ %d", n, emailMaxMany)
	}
	flat := strings.Join(strings.Fields(got), " ")
	if !strings.Contains(flat, "The full report covers the other") {
		t.Errorf("the e-mail does not point to the report for the comparisons it leaves out:\n%s", got)
	}
}

// TestDemoGolden is a regression pin: the text (e-mail), Markdown and JSON
// of the demo study as explained with seed 1 and the default draws, as
// last reviewed. Refresh with go test ./rank/report -run DemoGolden
// -update after reading the diff.
func TestDemoGolden(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	kb := testKB(t)
	path := filepath.Join("..", "..", "testdata", "demo", "study.yaml")
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	st, err := study.Parse("demo/study.yaml", data, kb, study.Options{}, os.ReadFile)
	if err != nil {
		t.Fatal(err)
	}
	set, err := rules.Default(kb)
	if err != nil {
		t.Fatal(err)
	}
	r, err := rank.Explain(context.Background(), st, kb, set, rank.Options{Seed: 1, Version: "test"})
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []struct{ format, file string }{
		{FormatText, "demo-text.golden"},
		{FormatMarkdown, "demo-markdown.golden"},
		{FormatJSON, "demo-json.golden"},
	} {
		t.Run(f.format, func(t *testing.T) {
			golden(t, f.file, []byte(render(t, r, f.format)))
		})
	}
}

// No format carries the slips issue 13 found: singular counts with plural
// nouns, doubled articles, "= none", rate multipliers, or a clear shift
// called small.
func TestNoSlipsInAnyFormat(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	for _, name := range []string{"clearcut", "fertilizer", "series", "nofit"} {
		r := studyResult(t, name)
		for _, f := range []string{FormatText, FormatTable, FormatMarkdown} {
			got := strings.Join(strings.Fields(render(t, r, f)), " ")
			for _, bad := range []string{" 1 years", " 1 bits", "the a ", "the an ", "= none", "× rate", "small relative to", "about the same size", " ,", "((", "))"} {
				if strings.Contains(got, bad) {
					t.Errorf("%s, %s: holds %q", name, f, bad)
				}
			}
		}
	}
}
