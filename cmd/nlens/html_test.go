package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestExplainHTML: --format html writes one page to stdout, and --out
// adds report.html to the folder.
func TestExplainHTML(t *testing.T) {
	study := writeReportStudy(t, reportStudy)
	code, out, errOut := runReport(t, append([]string{"explain", study, "--format", "html"}, reportFlags...)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, want := range []string{"<!DOCTYPE html>", `name="viewport"`, "<svg ", "Discussion draft", "</html>"} {
		if !strings.Contains(out, want) {
			t.Errorf("--format html output lacks %q", want)
		}
	}
	// The page goes through the terminal's escaping (humanOut); a tab in
	// the figures' markup would arrive as the text \x09 and break it.
	if strings.Contains(out, `\x`) || strings.Contains(out, `\u`) {
		t.Error("--format html output holds escaped control characters")
	}
	dir := filepath.Join(t.TempDir(), "report")
	code, _, errOut = runReport(t, append([]string{"demo", "--out", dir, "--format", "json"}, reportFlags...)...)
	if code != 0 {
		t.Fatalf("demo --out: exit %d: %s", code, errOut)
	}
	page, err := os.ReadFile(filepath.Join(dir, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(page), "<figure id=\"fig-trajectories\">") {
		t.Error("report.html of the demo has no trajectory figure")
	}
	if !strings.Contains(errOut, "report.html") {
		t.Errorf("the files written are not listed: %q", errOut)
	}
}
