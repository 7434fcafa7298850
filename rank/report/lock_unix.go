//go:build unix

package report

import (
	"errors"
	"fmt"
	"os"
	"syscall"
)

// dirLock is an advisory lock (flock) on a lock file. The kernel drops it
// when its holder dies, so a killed run never leaves a folder locked.
type dirLock struct {
	f *os.File
}

// lockDir takes the lock at path without waiting: ErrLocked if another
// run holds it.
func lockDir(path string) (*dirLock, error) {
	for range 10 {
		f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o644)
		if err != nil {
			return nil, err
		}
		if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
			f.Close()
			if errors.Is(err, syscall.EWOULDBLOCK) {
				return nil, ErrLocked
			}
			return nil, fmt.Errorf("lock %s: %w", path, err)
		}
		// The holder before us removes the file when it is done; if it did
		// so after we opened it, our lock is on a file no longer there.
		held, err1 := f.Stat()
		named, err2 := os.Stat(path)
		if err1 == nil && err2 == nil && os.SameFile(held, named) {
			return &dirLock{f: f}, nil
		}
		f.Close()
	}
	return nil, ErrLocked
}

// release removes the lock file and then drops the lock.
func (l *dirLock) release() error {
	err := os.Remove(l.f.Name())
	if cerr := l.f.Close(); err == nil {
		err = cerr
	}
	return err
}
