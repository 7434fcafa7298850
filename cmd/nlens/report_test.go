package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// run1 runs nlens in-process and returns the exit code and both streams.
func runReport(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errOut bytes.Buffer
	code := runEnv(&env{stdout: &out, stderr: &errOut}, args)
	return code, out.String(), errOut.String()
}

// reportStudy is an invented study (numbers made up for this test).
const reportStudy = `title: CLI report test
site:
  template: temperate-deciduous-forest
  soil_ph: 4.8
  drainage: well
  mean_annual_precip_mm: 1250
  mycorrhizal_type: mixed
comparisons:
  - name: harvested vs intact
    control: intact
    treatment: harvested
    years: 3
    management: [clear-cut]
groups:
  intact:
    foliage: {mean: 0.9, sd: 0.8, n: 6}
    soil-nitrate: {mean: -12.1, sd: 2.2, n: 5}
  harvested:
    foliage: {mean: 2.4, sd: 0.9, n: 6}
    soil-nitrate: {mean: -6.0, sd: 2.6, n: 5}
`

func writeReportStudy(t *testing.T, text string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "study.yaml")
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// reportFlags keeps the ranking quick: the tests check the wiring, not numbers.
var reportFlags = []string{"--draws", "8", "--seed", "5"}

func TestExplainTextAndMarkdown(t *testing.T) {
	study := writeReportStudy(t, reportStudy)
	for _, tc := range []struct {
		format string
		want   []string
	}{
		{"text", []string{"Hi,", "clear-cut harvest", "indicative, not proof", "licensed professionals", "Best,"}},
		{"markdown", []string{"# CLI report test", "## Discussion draft", "## Cautions", "## Methods", "## References"}},
	} {
		t.Run(tc.format, func(t *testing.T) {
			code, out, errOut := runReport(t, append([]string{"explain", study, "--format", tc.format}, reportFlags...)...)
			if code != exitOK {
				t.Fatalf("exit %d, stderr %q", code, errOut)
			}
			for _, w := range tc.want {
				if !strings.Contains(out, w) {
					t.Errorf("--format %s output lacks %q", tc.format, w)
				}
			}
		})
	}
}

func TestExplainOut(t *testing.T) {
	study := writeReportStudy(t, reportStudy)
	dir := filepath.Join(t.TempDir(), "report")
	code, out, errOut := runReport(t, append([]string{"explain", study, "--out", dir, "--format", "json"}, reportFlags...)...)
	if code != exitOK {
		t.Fatalf("exit %d, stderr %q", code, errOut)
	}
	for _, name := range []string{"report.md", "result.json", "references.bib", "shifts.svg", "shifts.png", "trajectories.svg", "measurements.png"} {
		if _, err := os.Stat(filepath.Join(dir, name)); err != nil {
			t.Errorf("--out did not write %s: %v", name, err)
		}
	}
	// result.json is the same document as --format json on stdout.
	saved, err := os.ReadFile(filepath.Join(dir, "result.json"))
	if err != nil {
		t.Fatal(err)
	}
	if string(saved) != out {
		t.Error("result.json differs from the --format json output of the same run")
	}
	if !json.Valid(saved) {
		t.Error("result.json is not valid JSON")
	}
	if !strings.Contains(errOut, "wrote") || !strings.Contains(errOut, dir) {
		t.Errorf("stderr %q should say what was written where", errOut)
	}

	// A second run into the same directory is refused, names it, and
	// changes nothing.
	before, _ := os.ReadFile(filepath.Join(dir, "report.md"))
	code, _, errOut = runReport(t, append([]string{"explain", study, "--out", dir}, reportFlags...)...)
	if code != exitBadInput {
		t.Fatalf("second run into %s: exit %d, want %d", dir, code, exitBadInput)
	}
	if !strings.Contains(errOut, dir) || !strings.Contains(errOut, "--force") {
		t.Errorf("stderr %q should name the directory and --force", errOut)
	}
	after, _ := os.ReadFile(filepath.Join(dir, "report.md"))
	if !bytes.Equal(before, after) {
		t.Error("a refused run changed report.md")
	}

	code, _, errOut = runReport(t, append([]string{"explain", study, "--out", dir, "--force"}, reportFlags...)...)
	if code != exitOK {
		t.Fatalf("--force: exit %d, stderr %q", code, errOut)
	}
}

// TestExplainBadInputWritesNothing: a study with an error exits 1 and
// leaves no output directory behind.
func TestExplainBadInputWritesNothing(t *testing.T) {
	study := writeReportStudy(t, strings.Replace(reportStudy, "drainage: well", "drainage: swampy", 1))
	dir := filepath.Join(t.TempDir(), "report")
	code, _, errOut := runReport(t, append([]string{"explain", study, "--out", dir}, reportFlags...)...)
	if code != exitBadInput {
		t.Fatalf("exit %d, want %d (stderr %q)", code, exitBadInput, errOut)
	}
	if !strings.Contains(errOut, "study.yaml:") {
		t.Errorf("stderr %q should give the file and line", errOut)
	}
	if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("the output directory exists after bad input (stat: %v)", err)
	}
}

func TestExplainFlagErrors(t *testing.T) {
	study := writeReportStudy(t, reportStudy)
	file := filepath.Join(t.TempDir(), "plain-file")
	if err := os.WriteFile(file, nil, 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		args []string
		want string
	}{
		{"unknown format", []string{"explain", study, "--format", "pdf"}, `--format "pdf"`},
		{"force without out", []string{"explain", study, "--force"}, "--force applies only with --out"},
		{"out is a file", []string{"explain", study, "--out", file}, "not a directory"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, _, errOut := runReport(t, tc.args...)
			if code != exitBadInput || !strings.Contains(errOut, tc.want) {
				t.Errorf("exit %d, stderr %q; want exit %d mentioning %q", code, errOut, exitBadInput, tc.want)
			}
		})
	}
}

func TestDemoEndsWithReportCommand(t *testing.T) {
	code, out, errOut := runReport(t, append([]string{"demo"}, reportFlags...)...)
	if code != exitOK {
		t.Fatalf("exit %d, stderr %q", code, errOut)
	}
	lines := strings.Split(strings.TrimSpace(out), "\n")
	if last := lines[len(lines)-1]; !strings.Contains(last, "nlens demo --out report/") {
		t.Errorf("demo ends with %q, want the command that writes the full report", last)
	}
}

func TestDemoOut(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "report")
	code, out, errOut := runReport(t, append([]string{"demo", "--out", dir, "--format", "text"}, reportFlags...)...)
	if code != exitOK {
		t.Fatalf("exit %d, stderr %q", code, errOut)
	}
	if !strings.HasPrefix(out, "Hi,") {
		t.Errorf("demo --format text printed %q…", out[:min(len(out), 40)])
	}
	md, err := os.ReadFile(filepath.Join(dir, "report.md"))
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(md, []byte("## Discussion draft")) {
		t.Error("demo --out wrote a report.md without a discussion draft")
	}
}
