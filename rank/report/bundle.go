package report

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"sort"

	"nlens/knowledge"
	"nlens/rank"
)

// Bundle file names.
const (
	BundleReport     = "report.md"
	BundleResult     = "result.json"
	BundleReferences = "references.bib"
)

// BundleOptions control WriteBundle.
type BundleOptions struct {
	// Force allows writing into a directory that already has files; the
	// bundle's files are replaced and figures of an earlier bundle that
	// this one does not have are removed. Other files are left alone.
	Force bool
}

// OutDirError is a problem with the output directory: it is not empty
// (and Force is not set), it is not a directory, or it cannot be written.
type OutDirError struct {
	Dir string
	Err error
}

func (e *OutDirError) Error() string { return fmt.Sprintf("output directory %s: %v", e.Dir, e.Err) }
func (e *OutDirError) Unwrap() error { return e.Err }

// ErrDirNotEmpty is the OutDirError cause when the directory has files and
// Force is not set.
var ErrDirNotEmpty = errors.New("not empty; use --force to replace the report files in it")

// CheckOutDir says whether WriteBundle may write into dir: it must not
// exist, or be an empty directory, or any directory when force is set.
// Commands call it before the (slow) ranking so a bad --out fails fast.
func CheckOutDir(dir string, force bool) error {
	if dir == "" {
		return &OutDirError{Dir: `""`, Err: errors.New("no directory given")}
	}
	fi, err := os.Stat(dir)
	switch {
	case errors.Is(err, os.ErrNotExist):
		return nil
	case err != nil:
		return &OutDirError{Dir: dir, Err: err}
	case !fi.IsDir():
		return &OutDirError{Dir: dir, Err: errors.New("exists and is not a directory")}
	case force:
		return nil
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return &OutDirError{Dir: dir, Err: err}
	}
	if len(entries) > 0 {
		return &OutDirError{Dir: dir, Err: ErrDirNotEmpty}
	}
	return nil
}

// WriteBundle writes the full report into dir: report.md (with figure
// links), result.json (as --format json), references.bib (exactly the
// works report.md cites) and each comparison's figures as SVG and PNG. All
// files are rendered in memory first, so nothing is written if any fails;
// each file is written to a temporary file in dir and renamed into place,
// so a reader never sees half a file. It returns the names written, sorted.
func WriteBundle(dir string, r *rank.Result, kb *knowledge.Base, opt BundleOptions) ([]string, error) {
	if err := CheckOutDir(dir, opt.Force); err != nil {
		return nil, err
	}
	files, err := renderBundle(r, kb)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, &OutDirError{Dir: dir, Err: err}
	}
	names := make([]string, 0, len(files))
	for name := range files {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		if err := writeWhole(dir, name, files[name]); err != nil {
			return nil, &OutDirError{Dir: dir, Err: err}
		}
	}
	if opt.Force {
		if err := removeStaleFigures(dir, files); err != nil {
			return nil, &OutDirError{Dir: dir, Err: err}
		}
	}
	return names, nil
}

// renderBundle renders every file of the bundle into memory.
func renderBundle(r *rank.Result, kb *knowledge.Base) (map[string][]byte, error) {
	files := map[string][]byte{}
	md, refs := markdownReport(r, kb, MarkdownOptions{Figures: true})
	files[BundleReport] = []byte(md)
	var buf bytes.Buffer
	if err := JSON(&buf, r); err != nil {
		return nil, fmt.Errorf("render %s: %w", BundleResult, err)
	}
	files[BundleResult] = bytes.Clone(buf.Bytes())
	buf.Reset()
	if err := bibCited(&buf, refs); err != nil {
		return nil, fmt.Errorf("render %s: %w", BundleReferences, err)
	}
	files[BundleReferences] = bytes.Clone(buf.Bytes())
	for _, f := range figurePlan(r) {
		for _, format := range []string{FigureSVG, FigurePNG} {
			buf.Reset()
			if err := Figure(&buf, r, f.Comparison, f.Kind, format); err != nil {
				return nil, err
			}
			files[f.Base+"."+format] = bytes.Clone(buf.Bytes())
		}
	}
	return files, nil
}

// writeWhole writes data to dir/name through a temporary file in dir and a
// rename, so the file appears complete or not at all.
func writeWhole(dir, name string, data []byte) (err error) {
	tmp, err := os.CreateTemp(dir, "."+name+".*.tmp")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	if _, err = io.Copy(tmp, bytes.NewReader(data)); err != nil {
		return fmt.Errorf("write %s: %w", name, err)
	}
	if err = tmp.Chmod(0o644); err != nil {
		return fmt.Errorf("write %s: %w", name, err)
	}
	if err = tmp.Close(); err != nil {
		return fmt.Errorf("write %s: %w", name, err)
	}
	if err = os.Rename(tmp.Name(), filepath.Join(dir, name)); err != nil {
		return fmt.Errorf("write %s: %w", name, err)
	}
	return nil
}

// figureFile matches the names of the figures WriteBundle writes.
var figureFile = regexp.MustCompile(`^(shifts|trajectories|measurements)(-[0-9]+)?\.(svg|png)$`)

// removeStaleFigures deletes figures an earlier bundle left in dir that
// this bundle did not write, so a report never sits beside figures of
// another result. Only names nlens itself gives figures are touched.
func removeStaleFigures(dir string, written map[string][]byte) error {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return err
	}
	for _, e := range entries {
		name := e.Name()
		if _, ok := written[name]; ok || e.IsDir() || !figureFile.MatchString(name) {
			continue
		}
		if err := os.Remove(filepath.Join(dir, name)); err != nil {
			return err
		}
	}
	return nil
}
