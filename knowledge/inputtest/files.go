package inputtest

import (
	"os"
	"slices"
	"testing"
)

// Sparse creates a file of the given size that uses no disk space (a hole
// made by truncation), for testing size caps with huge files.
func Sparse(t testing.TB, path string, size int64) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := f.Truncate(size); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// ListDir returns the sorted names in dir, for "nothing written" checks.
func ListDir(t testing.TB, dir string) []string {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	names := make([]string, len(entries))
	for i, e := range entries {
		names[i] = e.Name()
	}
	slices.Sort(names)
	return names
}
