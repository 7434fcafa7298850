package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"nlens/rank/study/sampletest"
)

// samplesRows is one invented table of samples (issue 14): the same data is
// written below as CSV in three dialects and as a workbook.
var samplesRows = [][]string{
	{"sample", "group", "observable", "value", "unit"},
	{"c1", "control", "foliage", "-1.5", "permil"},
	{"c2", "control", "foliage", "-0.5", "permil"},
	{"c3", "control", "foliage", "-1.0", "permil"},
	{"t1", "fert", "foliage", "1.25", "permil"},
	{"t2", "fert", "foliage", "0.75", "permil"},
	{"c1", "control", "soil", "3.5", ""},
	{"c2", "control", "soil", "4.5", ""},
	{"t1", "fert", "soil", "4.25", ""},
	{"t2", "fert", "soil", "4.75", ""},
}

const samplesStudy = `title: Samples in four formats (invented)
site: {template: temperate-deciduous-forest}
comparisons:
  - {name: fertilized vs control, control: control, treatment: fert, years: 3}
samples: FILE
`

// The same data as CSV (comma), CSV (semicolon, decimal comma, byte-order
// mark), CSV (UTF-16) and .xlsx gives byte-identical check output, apart
// from the paragraph that says how the samples file was read, which names
// each format as detected. The expected paragraphs are written from the
// files the test makes.
func TestSamplesFormatsSameCheck(t *testing.T) {
	t.Parallel()
	formats := []struct {
		file   string
		data   []byte
		source string
	}{
		{"comma.csv", sampletest.CSV(samplesRows, sampletest.CSVOptions{}),
			"comma.csv: CSV, comma-separated, decimal point, UTF-8; header on line 1, 9 data rows (to line 10)"},
		{"semicolon.csv", sampletest.CSV(samplesRows, sampletest.CSVOptions{Separator: ';', DecimalComma: true, Encoding: sampletest.UTF8BOM, QuoteHeader: true}),
			"semicolon.csv: CSV, semicolon-separated, decimal comma, UTF-8 with byte-order mark; header on line 1, 9 data rows (to line 10)"},
		{"utf16.csv", sampletest.CSV(samplesRows, sampletest.CSVOptions{Separator: '\t', Encoding: sampletest.UTF16LE, LineEnd: "\r\n"}),
			"utf16.csv: CSV, tab-separated, decimal point, UTF-16LE with byte-order mark; header on line 1, 9 data rows (to line 10)"},
		{"results.xlsx", sampletest.Workbook(t, sampletest.Sheet{Name: "δ15N", Rows: samplesRows}),
			"results.xlsx: workbook, sheet δ15N; header on row 1, 9 data rows (to row 10)"},
	}
	var first string
	for i, f := range formats {
		dir := t.TempDir()
		study := filepath.Join(dir, "study.yaml")
		write(t, study, []byte(strings.Replace(samplesStudy, "FILE", f.file, 1)))
		write(t, filepath.Join(dir, f.file), f.data)
		var out, errb bytes.Buffer
		if code := runEnv(&env{stdout: &out, stderr: &errb}, []string{"check", study}); code != exitOK {
			t.Fatalf("%s: exit %d: %s", f.file, code, errb.String())
		}
		text := out.String()
		source := "samples: " + filepath.Join(dir, f.source)
		start := strings.Index(text, "\nsamples: ")
		end := strings.Index(text, "\n\n")
		if start < 0 || end < start {
			t.Fatalf("%s: no samples paragraph in\n%s", f.file, text)
		}
		if got := strings.Join(strings.Fields(text[start+1:end]), " "); got != source {
			t.Errorf("%s: samples paragraph\n got %q\nwant %q", f.file, got, source)
		}
		rest := text[:start] + text[end:]
		if i == 0 {
			first = rest
			if !strings.Contains(rest, "foliage") || !strings.Contains(rest, "+2.00") {
				t.Errorf("the check output lacks the foliage shift +2.00 ‰ (by hand: 1.0 − (−1.0)):\n%s", rest)
			}
			continue
		}
		if rest != first {
			t.Errorf("%s: check output differs from %s:\n%s\n--- vs ---\n%s", f.file, formats[0].file, rest, first)
		}
	}
}

func write(t *testing.T, path string, data []byte) {
	t.Helper()
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
}

// A lab's workbook as it arrives (invented): a title block, the lab's own
// headers, 15N in atom % (computed with GNU bc 1.07.1 from the δ values of
// samplesRows: atom % = 100·R/(1 + R), R = 0.0036765·(1 + δ/1000)), a depth
// column with forest-floor and mineral depths, and a column nlens does not
// use. With a columns and values mapping it goes through check and explain
// unchanged, and check shows the foliage shift of samplesRows (+2.00 ‰, by
// hand from the δ values). (The soil shift depends on whether the site
// model has a forest-floor pool for the rows at −5–0 cm.)
func TestLabWorkbookCheckAndExplain(t *testing.T) {
	t.Parallel()
	rows := [][]string{
		{"Stable isotope results (invented)"},
		{"Sample ID", "Plot treatment", "Material", "15N (at%)", "Depth (cm)", "C/N"},
		{"c1", "Ctrl", "Leaf", "0.365755840703675", "", "21"},
		{"c2", "Ctrl", "Leaf", "0.366120804882419", "", "22"},
		{"c3", "Ctrl", "Leaf", "0.365938323127267", "", "20"},
		{"t1", "N added", "Leaf", "0.366759485761535", "", "17"},
		{"t2", "N added", "Leaf", "0.366577006345896", "", "18"},
		{"c1", "Ctrl", "Soil", "0.367580634860222", "0-10", "15"},
		{"c2", "Ctrl", "Soil", "0.367945585670526", "0-10", "14"},
		{"t1", "N added", "Soil", "0.367854348218601", "0-10", "13"},
		{"t2", "N added", "Soil", "0.368036822955351", "0-10", "13"},
		{"c1", "Ctrl", "Soil", "0.3661", "-5-0", "25"},
		{"c2", "Ctrl", "Soil", "0.3662", "-5-0", "25"},
		{"t1", "N added", "Soil", "0.3663", "-5-0", "24"},
		{"t2", "N added", "Soil", "0.3664", "-5-0", "24"},
	}
	dir := t.TempDir()
	study := filepath.Join(dir, "study.yaml")
	write(t, study, []byte(`title: Lab workbook (invented)
site: {template: temperate-deciduous-forest}
comparisons:
  - {name: N added vs control, control: control, treatment: fert, years: 3}
samples:
  file: isotopes.xlsx
  columns: {sample: Sample ID, group: Plot treatment, observable: Material, value: 15N (at%), depth_cm: Depth (cm)}
  values:
    group: {Ctrl: control, N added: fert}
    observable: {Leaf: foliage, Soil: soil}
  unit: atom%
`))
	write(t, filepath.Join(dir, "isotopes.xlsx"), sampletest.Workbook(t, sampletest.Sheet{Name: "Results", Rows: rows}))
	var out, errb bytes.Buffer
	if code := runEnv(&env{stdout: &out, stderr: &errb}, []string{"check", study}); code != exitOK {
		t.Fatalf("check: exit %d: %s", code, errb.String())
	}
	for _, want := range []string{"foliage", "+2.00", "13 values converted from 15N atom % with R_AIR = 0.0036765", `columns not used: "C/N"`} {
		if !strings.Contains(strings.Join(strings.Fields(out.String()), " "), want) {
			t.Errorf("check output lacks %q:\n%s", want, out.String())
		}
	}
	out.Reset()
	if code := runEnv(&env{stdout: &out, stderr: &errb}, []string{"explain", "--format", "json", "--draws", "8", study}); code != exitOK {
		t.Fatalf("explain: exit %d: %s", code, errb.String())
	}
	if !strings.Contains(out.String(), `"hypotheses"`) {
		t.Errorf("explain JSON has no hypotheses:\n%.400s", out.String())
	}
}

// A bad cell of a workbook is bad input: exit 1, the message naming sheet
// and cell, nothing on stdout.
func TestWorkbookBadCellExit(t *testing.T) {
	t.Parallel()
	rows := make([][]string, len(samplesRows))
	copy(rows, samplesRows)
	rows[6] = []string{"c1", "control", "soil", "n.d.", ""}
	dir := t.TempDir()
	study := filepath.Join(dir, "study.yaml")
	write(t, study, []byte(strings.Replace(samplesStudy, "FILE", "results.xlsx", 1)))
	write(t, filepath.Join(dir, "results.xlsx"), sampletest.Workbook(t, sampletest.Sheet{Name: "δ15N", Rows: rows}))
	var out, errb bytes.Buffer
	code := runEnv(&env{stdout: &out, stderr: &errb}, []string{"check", study})
	want := "nlens: " + filepath.Join(dir, "results.xlsx") + `: δ15N!D7: value: expected a number, got "n.d."` + "\n"
	if code != exitBadInput || errb.String() != want || out.Len() > 0 {
		t.Errorf("exit %d, stderr %q, stdout %q; want exit 1, %q", code, errb.String(), out.String(), want)
	}
}
