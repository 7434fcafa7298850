//go:build !unix

package report

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
)

// dirLock is a lock file created exclusively. Without flock, a lock left
// by a killed run stays until removed by hand; the message says which file.
type dirLock struct {
	path string
}

func lockDir(path string) (*dirLock, error) {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if errors.Is(err, fs.ErrExist) {
		return nil, fmt.Errorf("%w (if no other run is, remove %s)", ErrLocked, path)
	}
	if err != nil {
		return nil, err
	}
	fmt.Fprintf(f, "%d\n", os.Getpid())
	return &dirLock{path: path}, f.Close()
}

func (l *dirLock) release() error { return os.Remove(l.path) }
