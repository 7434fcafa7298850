package study

import (
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"nlens/knowledge"
	"nlens/knowledge/input"
)

// A study's samples file must be a regular file of at most 64 MiB: a named
// pipe would block and a device never end (issue 15). Each refusal is an
// input error at the samples key, the study going on to its other checks.
func TestSamplesFileKinds(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name string
		make func(t *testing.T, path string)
		want string
	}{
		{"directory", func(t *testing.T, path string) {
			if err := os.Mkdir(path, 0o755); err != nil {
				t.Fatal(err)
			}
		}, "cannot read samples file {path}: it is a directory, not a file"},
		{"named pipe", func(t *testing.T, path string) {
			if err := syscall.Mkfifo(path, 0o644); err != nil {
				t.Skipf("no named pipes here: %v", err)
			}
		}, "cannot read samples file {path}: it is a named pipe (FIFO), not a regular file"},
		{"larger than 64 MiB", func(t *testing.T, path string) {
			f, err := os.Create(path)
			if err != nil {
				t.Fatal(err)
			}
			// A sparse file: no 64 MiB are written to the disk.
			if err := f.Truncate(MaxSamplesBytes + 1); err != nil {
				t.Fatal(err)
			}
			f.Close()
		}, "cannot read samples file {path}: it holds 67108865 bytes; a site or samples file may hold at most 64 MiB (67108864 bytes)"},
		{"symbolic link to a directory", func(t *testing.T, path string) {
			if err := os.Symlink(t.TempDir(), path); err != nil {
				t.Fatal(err)
			}
		}, "cannot read samples file {path}: it is a directory, not a file"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			dir := t.TempDir()
			samples := filepath.Join(dir, "rows.csv")
			tt.make(t, samples)
			study := filepath.Join(dir, "study.yaml")
			text := "site: {template: temperate-deciduous-forest}\ncomparisons: [{control: a, treatment: b, years: 2}]\nsamples: rows.csv\n"
			if err := os.WriteFile(study, []byte(text), 0o644); err != nil {
				t.Fatal(err)
			}
			_, err := Load(study, knowledge.MustDefault(), Options{})
			want := study + ":3: samples: " + strings.Replace(tt.want, "{path}", samples, 1)
			if err == nil || err.Error() != want {
				t.Errorf("got  %v\nwant %s", err, want)
			}
		})
	}
}

// A readable samples file of the limit's size or less is read.
func TestSamplesFileRead(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	path := filepath.Join(dir, "rows.csv")
	data := "sample,group,observable,value\ns1,a,soil,1\ns2,a,soil,2\n"
	if err := os.WriteFile(path, []byte(data), 0o644); err != nil {
		t.Fatal(err)
	}
	got, err := input.ReadFile(path, input.Named)
	if err != nil || string(got) != data {
		t.Errorf("got %q, %v; want the file's text", got, err)
	}
}
