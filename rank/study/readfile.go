package study

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
)

// readInputFile reads a file a study names (its site file or samples
// file): only a regular file, since a named pipe would block and a device
// never end, and at most MaxSamplesBytes. Load passes it to Parse.
//
// It stands in for the shared bounded reader of issue 15 (package
// knowledge/input) until that exists.
func readInputFile(path string) ([]byte, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if err := regularFile(path, fi); err != nil {
		return nil, err
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	// The file may have been replaced since Stat.
	if fi, err = f.Stat(); err != nil {
		return nil, err
	}
	if err := regularFile(path, fi); err != nil {
		return nil, err
	}
	data, err := io.ReadAll(io.LimitReader(f, MaxSamplesBytes+1))
	if err != nil {
		return nil, err
	}
	if len(data) > MaxSamplesBytes {
		return nil, tooLarge(path)
	}
	return data, nil
}

// regularFile refuses anything but a regular file no larger than
// MaxSamplesBytes.
func regularFile(path string, fi fs.FileInfo) error {
	m := fi.Mode()
	var what string
	switch {
	case m.IsRegular():
		if fi.Size() > MaxSamplesBytes {
			return tooLarge(path)
		}
		return nil
	case m.IsDir():
		what = "a directory"
	case m&fs.ModeNamedPipe != 0:
		what = "a named pipe (FIFO)"
	case m&fs.ModeSocket != 0:
		what = "a socket"
	case m&fs.ModeDevice != 0:
		what = "a device"
	default:
		what = "a special file"
	}
	return &os.PathError{Op: "read", Path: path, Err: fmt.Errorf("it is %s, not a regular file", what)}
}

func tooLarge(path string) error {
	return &os.PathError{Op: "read", Path: path, Err: fmt.Errorf("the file is larger than %d MiB, the most nlens reads", MaxSamplesBytes>>20)}
}

func asPathError(err error, target **os.PathError) bool { return errors.As(err, target) }
