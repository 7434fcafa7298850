//go:build unix

package inputtest

import (
	"syscall"
	"testing"
)

// Mkfifo makes a named pipe at path (opening it for reading waits for a
// writer), or skips the test where the file system cannot hold one.
func Mkfifo(t testing.TB, path string) {
	t.Helper()
	if err := syscall.Mkfifo(path, 0o644); err != nil {
		t.Skipf("cannot make a named pipe here: %v", err)
	}
}
