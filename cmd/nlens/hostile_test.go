//go:build unix

package main

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/knowledge/inputtest"
	"nlens/rank/study"
)

// Hostile and careless inputs (issue 15): each is refused with exit 1, an
// exact message naming the path (and line and field where there is one),
// nothing on stdout, no stack trace, no file left behind. Messages were
// written from the rules of knowledge/input (what the path is, or its size
// and the cap of its kind: 4 MiB for study, site and rules files, 64 MiB
// for samples) before running; paths are those the test creates.

// hostileCase is one hostile input: setup prepares the working directory
// (the test's own temporary one) and returns the arguments; want is the
// expected stderr without the "nlens: " prefix.
type hostileCase struct {
	name  string
	setup func(t *testing.T) []string
	want  string
}

// writeFiles writes name → text into the working directory.
func writeFiles(t *testing.T, files map[string]string) {
	t.Helper()
	for name, text := range files {
		if err := os.WriteFile(name, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

func readCases() []hostileCase {
	const tenGiB = 10 << 30
	args := func(a ...string) func(*testing.T) []string { return func(*testing.T) []string { return a } }
	studyNaming := func(key, value string, prepare func(t *testing.T)) func(*testing.T) []string {
		return func(t *testing.T) []string {
			text := csvStudy
			if key == "site" {
				text = strings.Replace(siteStudy, "file: site.yaml", "file: "+value, 1)
			} else {
				text = strings.Replace(text, "samples: samples.csv", "samples: "+value, 1)
			}
			writeFiles(t, map[string]string{"study.yaml": text})
			prepare(t)
			return []string{"check", "study.yaml"}
		}
	}
	return []hostileCase{
		{"study is /dev/zero", args("check", "/dev/zero"),
			"/dev/zero: cannot read study file: it is a character device, not a regular file"},
		{"explain of /dev/zero", args("explain", "/dev/zero"),
			"/dev/zero: cannot read study file: it is a character device, not a regular file"},
		{"study is a FIFO", func(t *testing.T) []string { inputtest.Mkfifo(t, "study.yaml"); return []string{"check", "study.yaml"} },
			"study.yaml: cannot read study file: it is a named pipe (FIFO), not a regular file"},
		{"study is a 10 GiB sparse file", func(t *testing.T) []string {
			inputtest.Sparse(t, "study.yaml", tenGiB)
			return []string{"explain", "study.yaml"}
		},
			"study.yaml: cannot read study file: it holds 10 GiB; a study file may hold at most 4 MiB"},
		{"study is a directory", func(t *testing.T) []string { os.Mkdir("study.yaml", 0o755); return []string{"check", "study.yaml"} },
			"study.yaml: cannot read study file: it is a directory, not a file"},
		{"simulate --site /dev/zero", args("simulate", "--site", "/dev/zero"),
			"/dev/zero: cannot read site file: it is a character device, not a regular file"},
		{"simulate --site FIFO", func(t *testing.T) []string {
			inputtest.Mkfifo(t, "site.yaml")
			return []string{"simulate", "--site", "site.yaml"}
		},
			"site.yaml: cannot read site file: it is a named pipe (FIFO), not a regular file"},
		{"simulate --site 10 GiB", func(t *testing.T) []string {
			inputtest.Sparse(t, "site.yaml", tenGiB)
			return []string{"simulate", "--site", "site.yaml"}
		},
			"site.yaml: cannot read site file: it holds 10 GiB; a site file may hold at most 4 MiB"},
		{"--rules /dev/zero", func(t *testing.T) []string {
			writeFiles(t, map[string]string{"study.yaml": badStudy})
			return []string{"explain", "study.yaml", "--rules", "/dev/zero"}
		}, "/dev/zero: cannot read rules file: it is a character device, not a regular file"},
		{"--rules FIFO", func(t *testing.T) []string {
			writeFiles(t, map[string]string{"study.yaml": badStudy})
			inputtest.Mkfifo(t, "rules.yaml")
			return []string{"explain", "study.yaml", "--rules", "rules.yaml"}
		}, "rules.yaml: cannot read rules file: it is a named pipe (FIFO), not a regular file"},
		{"--rules 10 GiB", func(t *testing.T) []string {
			writeFiles(t, map[string]string{"study.yaml": badStudy})
			inputtest.Sparse(t, "rules.yaml", tenGiB)
			return []string{"explain", "study.yaml", "--rules", "rules.yaml"}
		}, "rules.yaml: cannot read rules file: it holds 10 GiB; a rules file may hold at most 4 MiB"},
		{"--rules missing", func(t *testing.T) []string {
			writeFiles(t, map[string]string{"study.yaml": badStudy})
			return []string{"explain", "study.yaml", "--rules", "rules.yaml"}
		}, "rules.yaml: cannot read rules file: no such file or directory"},
		{"samples file is /dev/zero", studyNaming("samples", "/dev/zero", func(*testing.T) {}),
			"study.yaml:4: samples: cannot read samples file /dev/zero: it is a character device, not a regular file"},
		{"samples file is a FIFO", studyNaming("samples", "samples.csv", func(t *testing.T) { inputtest.Mkfifo(t, "samples.csv") }),
			"study.yaml:4: samples: cannot read samples file samples.csv: it is a named pipe (FIFO), not a regular file"},
		{"samples file of 10 GiB", studyNaming("samples", "samples.csv", func(t *testing.T) { inputtest.Sparse(t, "samples.csv", tenGiB) }),
			"study.yaml:4: samples: cannot read samples file samples.csv: it holds 10 GiB; a site or samples file may hold at most 64 MiB"},
		{"site file of a study is a FIFO", studyNaming("site", "site.yaml", func(t *testing.T) { inputtest.Mkfifo(t, "site.yaml") }),
			"study.yaml:1: site.file: cannot read site file site.yaml: it is a named pipe (FIFO), not a regular file"},
		{"site file of a study is /dev/zero", studyNaming("site", "/dev/zero", func(*testing.T) {}),
			"study.yaml:1: site.file: cannot read site file /dev/zero: it is a character device, not a regular file"},
	}
}

// decodeCases are YAML problems that used to have a line but no field
// (issue 15, item 10); lines counted by hand in badStudy.
func decodeCases() []hostileCase {
	study := func(old, new string) func(*testing.T) []string {
		return func(t *testing.T) []string {
			writeFiles(t, map[string]string{"study.yaml": edit(t, badStudy, old, new)})
			return []string{"check", "study.yaml"}
		}
	}
	return []hostileCase{
		{"overflowing n", study("soil: {mean: 4.2, sd: 0.5, n: 4}", "soil: {mean: 4.2, sd: 0.5, n: 99999999999999999999}"),
			"study.yaml:19: groups.fert.soil.n: the number 99999999999999999999 is too large for this field"},
		{"unknown YAML tag", study("title: bad-input", "title: !!python/object bad-input"),
			"study.yaml:1: title: YAML tag !!python/object is not used in nlens files; write the value without it"},
		{"local YAML tag on a number", study("{mean: 4.2,", "{mean: !celsius 4.2,"),
			"study.yaml:19: groups.fert.soil.mean: YAML tag !celsius is not used in nlens files; write the value without it"},
		{"list where a mapping is expected", study("    soil: {mean: 4.0, sd: 0.5, n: 5}", "    soil: [4.0, 0.5, 5]"),
			"study.yaml:16: groups.control.soil: expected a mapping of keys, got a list"},
		{"mapping where a list is expected", study("comparisons:\n  - name: fertilized vs control\n", "comparisons:\n  one:\n    name: fertilized vs control\n"),
			"study.yaml:7: comparisons: expected a list, got a mapping"},
	}
}

func TestHostileInput(t *testing.T) {
	cases := append(readCases(), decodeCases()...)
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			t.Chdir(dir)
			args := tc.setup(t)
			before := inputtest.ListDir(t, dir)
			var out, errb bytes.Buffer
			code := runEnv(&env{stdout: &out, stderr: &errb}, args)
			if code != exitBadInput {
				t.Errorf("exit code %d, want %d (bad input)", code, exitBadInput)
			}
			if want := "nlens: " + tc.want + "\n"; errb.String() != want {
				t.Errorf("stderr\n got: %q\nwant: %q", errb.String(), want)
			}
			if out.Len() > 0 {
				t.Errorf("stdout should be empty, got %q", out.String())
			}
			if after := inputtest.ListDir(t, dir); !slices.Equal(after, before) {
				t.Errorf("the run changed the directory: before %s, after %s", before, after)
			}
		})
	}
}

// An ill-conditioned site is refused with its condition number, and the
// number survives every wrapping on the way to the caller: errors.As finds
// the *forward.ConditionError through forward.LoadSite and study.Load
// (STYLE 12). illConditioned's condition number, 8.0e12, was computed by
// hand (badinput_test.go).
func TestConditionNumberSurvivesWrapping(t *testing.T) {
	kb := knowledge.MustDefault()
	dir := t.TempDir()
	site := filepath.Join(dir, "site.yaml")
	stud := filepath.Join(dir, "study.yaml")
	if err := os.WriteFile(site, []byte(illConditioned), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(stud, []byte(siteStudy), 0o644); err != nil {
		t.Fatal(err)
	}
	_, siteErr := forward.LoadSite(site, kb)
	_, studyErr := study.Load(stud, kb, study.Options{})
	for name, err := range map[string]error{"LoadSite": siteErr, "study.Load": studyErr} {
		var ce *forward.ConditionError
		if !errors.As(err, &ce) {
			t.Errorf("%s: errors.As found no *forward.ConditionError in %v", name, err)
			continue
		}
		if rel := ce.Cond/8.0e12 - 1; rel < -0.01 || rel > 0.01 {
			t.Errorf("%s: condition number %g, want 8.0e12 within 1 %% (hand computation)", name, ce.Cond)
		}
		var ie *knowledge.InputError
		if !errors.As(err, &ie) || ie.Line != 6 || ie.Field != "transfers" {
			t.Errorf("%s: the position is lost: %v", name, err)
		}
	}
}

// unbalancedSite is badSite with the denitrification rate doubled (4
// instead of 2 kg N/ha/yr), so the file's pools are not the model's steady
// state. By hand, with k = rate/pool: nitrate N = 2A/6 = A/3; plant P =
// (3A + 4A/3)/0.23 = 18.841·A; organic O = 0.23P/0.023 = 10P; ammonium
// 5 + 0.02·O = 5A gives A = 5/(5 − 3.7681) = 4.0588, so N = 1.3529,
// P = 76.47, O = 764.7 kg N/ha: −24 %, −19 %, −32 %, −24 % from the file.
func unbalancedSite(t *testing.T) string {
	return edit(t, badSite, "to: out, rate: 2}", "to: out, rate: 4}")
}

// check, explain and simulate give the same steady-state pool warnings,
// from one source (forward.Site.Warnings, set when the site is parsed),
// each once (issue 15, item 5: check and explain dropped them).
func TestSamePoolWarningsEverywhere(t *testing.T) {
	want := []string{
		`site "small": the steady-state organic pool is 764.7 kg N/ha, -24 % from the file's 1000`,
		`site "small": the steady-state ammonium pool is 4.059 kg N/ha, -19 % from the file's 5`,
		`site "small": the steady-state nitrate pool is 1.353 kg N/ha, -32 % from the file's 2`,
		`site "small": the steady-state plant pool is 76.47 kg N/ha, -24 % from the file's 100`,
	}
	t.Chdir(t.TempDir())
	writeFiles(t, map[string]string{"site.yaml": unbalancedSite(t), "study.yaml": siteStudy})
	runs := map[string][]string{
		"check":    {"check", "study.yaml"},
		"explain":  {"explain", "study.yaml", "--format", "json", "--draws", "8"},
		"simulate": {"simulate", "--site", "site.yaml", "--change", "nitrification=x2"},
	}
	for name, args := range runs {
		var out, errb bytes.Buffer
		if code := runEnv(&env{stdout: &out, stderr: &errb}, args); code != exitOK {
			t.Fatalf("%s: exit %d: %s", name, code, errb.String())
		}
		// check wraps its warnings at 78 columns; JSON escapes quotes.
		text := strings.Join(strings.Fields(out.String()+" "+errb.String()), " ")
		text = strings.ReplaceAll(text, `\"`, `"`)
		for _, w := range want {
			if n := strings.Count(text, w); n != 1 {
				t.Errorf("%s shows %q %d times, want once", name, w, n)
			}
		}
	}
}
