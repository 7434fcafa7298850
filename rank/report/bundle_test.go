package report

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"nlens/knowledge/inputtest"
	"nlens/rank"
)

func readFile(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

var reLink = regexp.MustCompile(`\]\(([^)]+)\)`)

// checkBundle checks a written bundle: result.json equals --format json,
// every link in report.md points to a file of the bundle, and the
// citations of report.md resolve in its reference list and in
// references.bib.
func checkBundle(t *testing.T, dir string, r *rank.Result) {
	t.Helper()
	var want bytes.Buffer
	if err := JSON(&want, r); err != nil {
		t.Fatal(err)
	}
	if got := readFile(t, filepath.Join(dir, BundleResult)); got != want.String() {
		t.Error("result.json differs from --format json")
	}
	md := readFile(t, filepath.Join(dir, BundleReport))
	for _, m := range reLink.FindAllStringSubmatch(md, -1) {
		if _, err := os.Stat(filepath.Join(dir, m[1])); err != nil {
			t.Errorf("report.md links to %s, which the bundle lacks", m[1])
		}
	}
	_, refs := markdownReport(r, testKB(t), MarkdownOptions{Figures: true})
	checkCitations(t, md, refs, readFile(t, filepath.Join(dir, BundleReferences)))
}

func TestWriteBundle(t *testing.T) {
	t.Parallel()
	kb := testKB(t)
	for _, tc := range []struct {
		name string
		r    *rank.Result
		want string
	}{
		{"transient", transientResult(), "measurements.png measurements.svg references.bib report.html report.md result.json shifts.png shifts.svg trajectories.png trajectories.svg"},
		// figurePlan of multiResult (see TestFigurePlan) plus the three documents.
		{"multi", multiResult(), "measurements-1.png measurements-1.svg references.bib report.html report.md result.json shifts-1.png shifts-1.svg shifts-2.png shifts-2.svg shifts-3.png shifts-3.svg trajectories-1.png trajectories-1.svg trajectories-2.png trajectories-2.svg"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			dir := filepath.Join(t.TempDir(), "out", "nested")
			names, err := WriteBundle(dir, tc.r, kb, BundleOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if got := strings.Join(names, " "); got != tc.want {
				t.Errorf("wrote %s\nwant %s", got, tc.want)
			}
			if got := strings.Join(inputtest.ListDir(t, dir), " "); got != tc.want {
				t.Errorf("directory holds %s\nwant %s", got, tc.want)
			}
			checkBundle(t, dir, tc.r)
		})
	}
}

func TestWriteBundleRefusesNonEmptyDir(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	keep := filepath.Join(dir, "notes.txt")
	if err := os.WriteFile(keep, []byte("mine"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := WriteBundle(dir, transientResult(), testKB(t), BundleOptions{})
	var de *OutDirError
	if !errors.As(err, &de) || !errors.Is(err, ErrDirNotEmpty) {
		t.Fatalf("got %v, want an OutDirError for a non-empty directory", err)
	}
	if !strings.Contains(err.Error(), dir) || !strings.Contains(err.Error(), "--force") {
		t.Errorf("error %q should name the directory and --force", err)
	}
	if got := strings.Join(inputtest.ListDir(t, dir), " "); got != "notes.txt" {
		t.Errorf("directory now holds %s, want only notes.txt", got)
	}
}

// TestWriteBundleForce: --force replaces the bundle's files, removes
// figures of an earlier bundle that this one does not have, keeps the
// user's other files and leaves no temporary file behind.
func TestWriteBundleForce(t *testing.T) {
	t.Parallel()
	kb := testKB(t)
	dir := t.TempDir()
	if _, err := WriteBundle(dir, multiResult(), kb, BundleOptions{}); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "notes.txt"), []byte("mine"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, BundleReport), []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	r := transientResult()
	if _, err := WriteBundle(dir, r, kb, BundleOptions{Force: true}); err != nil {
		t.Fatal(err)
	}
	want := "measurements.png measurements.svg notes.txt references.bib report.html report.md result.json shifts.png shifts.svg trajectories.png trajectories.svg"
	if got := strings.Join(inputtest.ListDir(t, dir), " "); got != want {
		t.Errorf("directory holds %s\nwant %s", got, want)
	}
	checkBundle(t, dir, r)
}

func TestWriteBundleBadDir(t *testing.T) {
	t.Parallel()
	file := filepath.Join(t.TempDir(), "file")
	if err := os.WriteFile(file, nil, 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := WriteBundle(file, transientResult(), testKB(t), BundleOptions{Force: true})
	var de *OutDirError
	if !errors.As(err, &de) || !strings.Contains(err.Error(), "not a directory") {
		t.Errorf("got %v, want an OutDirError saying it is not a directory", err)
	}
}

// TestWriteBundleNothingOnFailure: a result that cannot be drawn (a
// comparison without observed shifts) fails before anything is written,
// and the folders made above the output directory are removed again.
func TestWriteBundleNothingOnFailure(t *testing.T) {
	t.Parallel()
	r := transientResult()
	r.Comparisons[0].Observed = nil
	top := t.TempDir()
	if _, err := WriteBundle(filepath.Join(top, "out", "nested"), r, testKB(t), BundleOptions{}); err == nil {
		t.Fatal("WriteBundle succeeded on a result it cannot draw")
	}
	if got := inputtest.ListDir(t, top); len(got) > 0 {
		t.Errorf("left behind %v", got)
	}
}

func TestCheckOutDir(t *testing.T) {
	t.Parallel()
	empty := t.TempDir()
	full := t.TempDir()
	if err := os.WriteFile(filepath.Join(full, "x"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name    string
		dir     string
		force   bool
		wantErr bool
	}{
		{"missing", filepath.Join(empty, "new"), false, false},
		{"empty", empty, false, false},
		{"full", full, false, true},
		{"full with force", full, true, false},
		{"no name", "", true, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if err := CheckOutDir(tc.dir, tc.force); (err != nil) != tc.wantErr {
				t.Errorf("CheckOutDir(%q, %v) = %v, want error %v", tc.dir, tc.force, err, tc.wantErr)
			}
		})
	}
}
