package input

import (
	"bytes"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"testing"

	"nlens/knowledge/inputtest"
)

// ReadFile refuses what is not a regular file and what is larger than its
// kind's cap, without reading it; messages are exact (written from the
// rule: what the path is, or its size and the cap, DESIGN §7 "clear
// error"). The caps are those of the kinds (4 MiB study, site and rules;
// 64 MiB samples), stated in DEVELOPERS.md.
func TestReadFileRefuses(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	sparse := func(name string, size int64) string {
		p := filepath.Join(dir, name)
		inputtest.Sparse(t, p, size)
		return p
	}
	huge := sparse("huge.yaml", 10<<30)
	over := sparse("over.yaml", 4<<20+1)
	samples := sparse("samples.csv", 65<<20)
	missing := filepath.Join(dir, "missing.yaml")
	dangling := filepath.Join(dir, "dangling.yaml")
	if err := os.Symlink(missing, dangling); err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name string
		path string
		kind Kind
		is   error
		want string
	}{
		{"a 10 GiB sparse file", huge, Study, ErrTooLarge, huge + ": cannot read study file: it holds 10 GiB; a study file may hold at most 4 MiB"},
		{"one byte over the cap", over, Site, ErrTooLarge, over + ": cannot read site file: it holds 4194305 bytes; a site file may hold at most 4 MiB (4194304 bytes)"},
		{"samples over their cap", samples, Samples, ErrTooLarge, samples + ": cannot read samples file: it holds 68157440 bytes; a samples file may hold at most 64 MiB (67108864 bytes)"},
		{"a directory", dir, Rules, ErrNotRegular, dir + ": cannot read rules file: it is a directory, not a file"},
		{"missing", missing, Study, fs.ErrNotExist, missing + ": cannot read study file: no such file or directory"},
		{"dangling symbolic link", dangling, Site, fs.ErrNotExist, dangling + ": cannot read site file: no such file or directory"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			data, err := Read(tt.path, tt.kind)
			if err == nil {
				t.Fatalf("read %d bytes, want an error", len(data))
			}
			if !errors.Is(err, tt.is) {
				t.Errorf("errors.Is(%v, %v) is false", err, tt.is)
			}
			if got := err.Error(); got != tt.want {
				t.Errorf("got  %q\nwant %q", got, tt.want)
			}
		})
	}
}

// A file at its cap is read whole; the error of ReadFile itself is an
// *fs.PathError, as os.ReadFile's, so a caller that prints only its cause
// (as the study reader does for the files it names) reads cleanly.
func TestReadFileAtCap(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	p := filepath.Join(dir, "at-cap.csv")
	want := bytes.Repeat([]byte("a,b\n"), int(Samples.MaxBytes()/4))
	if err := os.WriteFile(p, want, 0o644); err != nil {
		t.Fatal(err)
	}
	got, err := ReadFile(p, Samples)
	if err != nil || !bytes.Equal(got, want) {
		t.Fatalf("read %d bytes, err %v; want %d bytes", len(got), err, len(want))
	}
	_, err = ReadFile(dir, Named)
	var pe *fs.PathError
	if !errors.As(err, &pe) || pe.Path != dir || pe.Err.Error() != "it is a directory, not a file" {
		t.Errorf("got %#v", err)
	}
}

// A file whose reported size is below the cap but whose content is not
// (a file under /proc reports size 0) is still stopped at the cap.
func TestReadFileStopsAtCapWhileReading(t *testing.T) {
	t.Parallel()
	const p = "/proc/self/status"
	if fi, err := os.Stat(p); err != nil || fi.Size() != 0 {
		t.Skip("needs Linux's /proc, whose files report size 0")
	}
	_, err := readBounded(p, Named, 100)
	want := "read " + p + ": it holds more than 100 B; a site or samples file may hold at most 100 B"
	if err == nil || err.Error() != want {
		t.Errorf("got %v, want %q", err, want)
	}
}

// sizeText writes binary units (IEC 80000-13).
func TestSizeText(t *testing.T) {
	t.Parallel()
	for n, want := range map[int64]string{0: "0 B", 1023: "1023 B", 1024: "1 KiB", 1536: "1.5 KiB", 4 << 20: "4 MiB", 10 << 30: "10 GiB"} {
		if got := SizeText(n); got != want {
			t.Errorf("SizeText(%d) = %q, want %q", n, got, want)
		}
	}
}
