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
