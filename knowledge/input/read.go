package input

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"syscall"
)

// Kind is a kind of input file; each has a size cap, the most bytes nlens
// reads of it. The caps are far above any real file of the kind and low
// enough that parsing one at the cap stays within a few hundred MB of
// memory and a few seconds (measured in read_test.go's benchmarks; the
// numbers are in DEVELOPERS.md).
type Kind int

// The kinds of input file.
const (
	// Study is a study file (YAML).
	Study Kind = iota
	// Site is a site file (YAML), as given to simulate --site.
	Site
	// Rules is a file of extra candidates or context rules (YAML, --rules).
	Rules
	// Samples is a per-sample table (CSV or spreadsheet).
	Samples
	// Named is a file a study names (its site file or samples table); the
	// study's reader does not say which, so the larger cap applies.
	Named
)

const mib = 1 << 20

var kinds = [...]struct {
	name string
	max  int64
}{
	Study:   {"study", 4 * mib},
	Site:    {"site", 4 * mib},
	Rules:   {"rules", 4 * mib},
	Samples: {"samples", 64 * mib},
	Named:   {"site or samples", 64 * mib},
}

// String names the kind as in "a study file".
func (k Kind) String() string {
	if k < 0 || int(k) >= len(kinds) {
		return fmt.Sprintf("Kind(%d)", int(k))
	}
	return kinds[k].name
}

// MaxBytes is the size cap of the kind, in bytes.
func (k Kind) MaxBytes() int64 {
	if k < 0 || int(k) >= len(kinds) {
		return 0
	}
	return kinds[k].max
}

// ErrNotRegular is the cause (for errors.Is) when an input path names a
// directory, a device, a named pipe or a socket rather than a regular file.
var ErrNotRegular = errors.New("not a regular file")

// ErrTooLarge is the cause (for errors.Is) when an input file is larger
// than its kind's cap.
var ErrTooLarge = errors.New("input file too large")

type notRegular struct{ what string }

func (e notRegular) Error() string {
	if e.what == "a directory" {
		return "it is a directory, not a file"
	}
	return "it is " + e.what + ", not a regular file"
}

func (e notRegular) Is(target error) bool { return target == ErrNotRegular }

type tooLarge struct {
	size int64 // bytes; 0 when only "more than the cap" is known
	max  int64 // the cap, bytes
	kind Kind
}

func (e tooLarge) Error() string {
	held, limit := "more than "+SizeText(e.max), SizeText(e.max)
	switch {
	case e.size >= 2*e.max:
		held = SizeText(e.size)
	case e.size > 0: // near the cap: rounding would hide the difference
		held, limit = fmt.Sprintf("%d bytes", e.size), fmt.Sprintf("%s (%d bytes)", limit, e.max)
	}
	return fmt.Sprintf("it holds %s; a %s file may hold at most %s", held, e.kind, limit)
}

func (e tooLarge) Is(target error) bool { return target == ErrTooLarge }

// SizeText writes a byte count in binary units: "512 B", "4 MiB", "9.3 GiB".
func SizeText(n int64) string {
	units := []string{"B", "KiB", "MiB", "GiB", "TiB", "PiB", "EiB"}
	v, u := float64(n), 0
	for v >= 1024 && u < len(units)-1 {
		v /= 1024
		u++
	}
	if v == float64(int64(v)) {
		return fmt.Sprintf("%d %s", int64(v), units[u])
	}
	return fmt.Sprintf("%.1f %s", v, units[u])
}

// describeMode says what a file that is not regular is.
func describeMode(m fs.FileMode) string {
	switch {
	case m.IsDir():
		return "a directory"
	case m&fs.ModeNamedPipe != 0:
		return "a named pipe (FIFO)"
	case m&fs.ModeSocket != 0:
		return "a socket"
	case m&fs.ModeCharDevice != 0:
		return "a character device"
	case m&fs.ModeDevice != 0:
		return "a block device"
	}
	return fmt.Sprintf("not a regular file (mode %s)", m.Type())
}

func checkRegular(fi fs.FileInfo) error {
	if fi.Mode().IsRegular() {
		return nil
	}
	return notRegular{describeMode(fi.Mode())}
}

// ReadFile reads the whole regular file at path, of the given kind, like
// os.ReadFile but bounded: a directory, device, named pipe or socket is
// refused without being read (a pipe without blocking on it), and so is a
// file larger than the kind's cap (from its size, so a huge sparse file is
// not read; a file that grows past the cap while being read is refused
// too). Errors are *fs.PathError as from os.ReadFile, so that
// errors.Is(err, fs.ErrNotExist) works; the cause is ErrNotRegular or
// ErrTooLarge (for errors.Is) with a message saying what the path is or
// how large it is and the cap. ReadError turns them into a positioned
// *Error.
func ReadFile(path string, kind Kind) ([]byte, error) {
	return readBounded(path, kind, kind.MaxBytes())
}

// readBounded is ReadFile with the cap given (tests use small ones).
func readBounded(path string, kind Kind, max int64) ([]byte, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if err := checkRegular(fi); err != nil {
		return nil, &fs.PathError{Op: "open", Path: path, Err: err}
	}
	if fi.Size() > max {
		return nil, &fs.PathError{Op: "read", Path: path, Err: tooLarge{fi.Size(), max, kind}}
	}
	// O_NONBLOCK: should the path have become a named pipe since the Stat
	// above, opening it must not wait for a writer.
	f, err := os.OpenFile(path, os.O_RDONLY|syscall.O_NONBLOCK, 0)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if fi2, err := f.Stat(); err != nil {
		return nil, err
	} else if err := checkRegular(fi2); err != nil {
		return nil, &fs.PathError{Op: "open", Path: path, Err: err}
	}
	data, err := io.ReadAll(io.LimitReader(f, max+1))
	if err != nil {
		return nil, &fs.PathError{Op: "read", Path: path, Err: err}
	}
	if int64(len(data)) > max {
		return nil, &fs.PathError{Op: "read", Path: path, Err: tooLarge{0, max, kind}}
	}
	return data, nil
}

// ReadError turns an error of ReadFile into an *Error naming the file and
// the kind: "study.yaml: cannot read study file: no such file or
// directory". The cause stays reachable with errors.Is.
func ReadError(kind Kind, err error) *Error {
	e := &Error{Err: err}
	var pe *fs.PathError
	if errors.As(err, &pe) {
		e.File, e.Err = pe.Path, pe.Err
	}
	e.Msg = fmt.Sprintf("cannot read %s file: %v", kind, e.Err)
	return e
}

// Read is ReadFile with its error made by ReadError, for callers that read
// a file named on the command line.
func Read(path string, kind Kind) ([]byte, error) {
	data, err := ReadFile(path, kind)
	if err != nil {
		return nil, ReadError(kind, err)
	}
	return data, nil
}
