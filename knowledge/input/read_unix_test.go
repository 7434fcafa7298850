//go:build unix

package input

import (
	"errors"
	"os"
	"path/filepath"
	"testing"
	"time"

	"nlens/knowledge/inputtest"
)

// A named pipe, a device and a link to a pipe are refused with a message
// saying what they are, and a pipe without waiting for a writer (issue 15:
// a FIFO blocked nlens for ever). The wait below only detects a hang so
// that it fails instead of stalling the test run; it measures nothing.
func TestReadFileRefusesSpecialFiles(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	fifo := filepath.Join(dir, "study.yaml")
	inputtest.Mkfifo(t, fifo)
	link := filepath.Join(dir, "link.yaml")
	if err := os.Symlink(fifo, link); err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name, path string
		kind       Kind
		want       string
	}{
		{"named pipe", fifo, Study, fifo + ": cannot read study file: it is a named pipe (FIFO), not a regular file"},
		{"link to a named pipe", link, Rules, link + ": cannot read rules file: it is a named pipe (FIFO), not a regular file"},
		{"/dev/zero", "/dev/zero", Samples, "/dev/zero: cannot read samples file: it is a character device, not a regular file"},
		{"/dev/null", "/dev/null", Site, "/dev/null: cannot read site file: it is a character device, not a regular file"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			if _, err := os.Stat(tt.path); err != nil {
				t.Skipf("no %s here", tt.path)
			}
			done := make(chan error, 1)
			go func() {
				_, err := Read(tt.path, tt.kind)
				done <- err
			}()
			var err error
			select {
			case err = <-done:
			case <-time.After(time.Minute):
				t.Fatal("reading blocked")
			}
			if !errors.Is(err, ErrNotRegular) {
				t.Errorf("errors.Is(%v, ErrNotRegular) is false", err)
			}
			if err == nil || err.Error() != tt.want {
				t.Errorf("got  %v\nwant %s", err, tt.want)
			}
		})
	}
}
