package report

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"syscall"

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
	// Force allows replacing a directory that already has files: the new
	// bundle takes the place of the old one (figures of an earlier bundle
	// that this one does not have go with it) and the user's other files
	// are kept.
	Force bool
}

// OutDirError is a problem with the output directory: it is not empty
// (and Force is not set), it is not a directory, it cannot be written, or
// another run is writing it.
type OutDirError struct {
	Dir string
	Err error
}

func (e *OutDirError) Error() string { return fmt.Sprintf("output directory %s: %v", e.Dir, e.Err) }
func (e *OutDirError) Unwrap() error { return e.Err }

// ErrDirNotEmpty is the OutDirError cause when the directory has files and
// Force is not set.
var ErrDirNotEmpty = errors.New("not empty; use --force to replace the report files in it")

// ErrLocked is the OutDirError cause when another run holds the directory.
var ErrLocked = errors.New("another nlens run is writing it")

// A bundle is written whole. Its files are written into a temporary
// sibling folder, ".NAME.nlens-new-*", which then takes the place of the
// output folder NAME by renames: NAME is first moved aside to
// ".NAME.nlens-old-*", the new folder renamed to NAME, and the old one
// removed. NAME therefore holds the old bundle or the new one, never a
// mix; a run killed between the two renames leaves NAME missing and the
// old bundle aside, and the next run puts it back before anything else.
// A lock file ".NAME.nlens-lock" beside NAME keeps a second run out while
// one holds the folder (from before its computation to the end), and the
// next run removes what a killed one left.
const (
	newPrefix  = ".nlens-new-"
	oldPrefix  = ".nlens-old-"
	lockSuffix = ".nlens-lock"
)

// OutDir is an output directory reserved for one run: checked, locked, and
// cleaned of what an interrupted run left. Reserve it before computing, so
// that a bad or busy --out fails before any work, then Write the bundle
// and Release it.
type OutDir struct {
	dir     string // as given
	target  string // the directory written, symbolic links resolved
	force   bool
	lock    *dirLock
	created []string // parent directories made by Reserve, deepest first
	wrote   bool
}

// CheckOutDir says whether a bundle may be written to dir, without
// reserving it: dir must not exist, or be an empty directory, or any
// directory when force is set, and the directory that holds it must be
// writable (a symbolic link is followed; one that leads nowhere is an
// error). Errors are *OutDirError naming dir.
func CheckOutDir(dir string, force bool) error {
	_, err := checkOutDir(dir, force)
	return err
}

// checkOutDir returns the directory to write (dir with symbolic links
// resolved) after the checks of CheckOutDir.
func checkOutDir(dir string, force bool) (string, error) {
	fail := func(err error) (string, error) { return "", &OutDirError{Dir: dir, Err: err} }
	if dir == "" {
		return "", &OutDirError{Dir: `""`, Err: errors.New("no directory given")}
	}
	target := filepath.Clean(dir)
	if fi, err := os.Lstat(target); err == nil && fi.Mode()&fs.ModeSymlink != 0 {
		resolved, err := filepath.EvalSymlinks(target)
		if err != nil {
			link, _ := os.Readlink(target)
			return fail(fmt.Errorf("a symbolic link to %s, which does not exist", link))
		}
		target = resolved
	}
	fi, err := os.Stat(target)
	switch {
	case errors.Is(err, fs.ErrNotExist), errors.Is(err, syscall.ENOTDIR):
		// Missing, or below a file: checkWritable says which.
	case err != nil:
		return fail(err)
	case !fi.IsDir():
		return fail(errors.New("exists and is not a directory"))
	case !force:
		entries, err := os.ReadDir(target)
		if err != nil {
			return fail(err)
		}
		if len(entries) > 0 {
			return fail(ErrDirNotEmpty)
		}
	}
	if err := checkWritable(filepath.Dir(target)); err != nil {
		return fail(err)
	}
	return target, nil
}

// checkWritable finds the nearest existing directory at or above dir and
// tries to create a file in it (then removes it): the only test of
// writability that holds for every user and file system.
func checkWritable(dir string) error {
	for {
		fi, err := os.Stat(dir)
		switch {
		case err == nil && !fi.IsDir():
			return fmt.Errorf("%s is not a directory", dir)
		case err == nil:
			f, err := os.CreateTemp(dir, ".nlens-probe-*")
			if err != nil {
				return fmt.Errorf("cannot write in %s: %w", dir, unwrapPath(err))
			}
			f.Close()
			return os.Remove(f.Name())
		case !errors.Is(err, fs.ErrNotExist):
			return err
		}
		up := filepath.Dir(dir)
		if up == dir {
			return fmt.Errorf("%s does not exist", dir)
		}
		dir = up
	}
}

func unwrapPath(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// ReserveOutDir checks dir as CheckOutDir does, creates the directories
// above it, takes its lock (an *OutDirError with ErrLocked if another run
// holds it) and cleans up what an interrupted run left: an old bundle
// moved aside is put back if the folder is missing, unfinished new
// bundles are removed.
func ReserveOutDir(dir string, force bool) (*OutDir, error) {
	target, err := checkOutDir(dir, force)
	if err != nil {
		return nil, err
	}
	o := &OutDir{dir: dir, target: target, force: force}
	fail := func(err error) (*OutDir, error) {
		o.Release()
		var de *OutDirError
		if errors.As(err, &de) {
			return nil, err
		}
		return nil, &OutDirError{Dir: dir, Err: err}
	}
	if err := o.makeParents(); err != nil {
		return fail(err)
	}
	if o.lock, err = lockDir(o.lockPath()); err != nil {
		return fail(err)
	}
	if err := o.cleanUp(); err != nil {
		return fail(err)
	}
	// Another run may have changed the folder before the lock was taken.
	if _, err := checkOutDir(target, force); err != nil {
		return fail(err)
	}
	return o, nil
}

func (o *OutDir) sibling(prefix string) string {
	return filepath.Join(filepath.Dir(o.target), "."+filepath.Base(o.target)+prefix)
}

func (o *OutDir) lockPath() string { return o.sibling(lockSuffix) }

// makeParents creates the missing directories above the target,
// remembering them so that Release can remove them if nothing was written.
func (o *OutDir) makeParents() error {
	var missing []string
	for d := filepath.Dir(o.target); ; d = filepath.Dir(d) {
		if _, err := os.Stat(d); err == nil {
			break
		}
		missing = append(missing, d)
		if filepath.Dir(d) == d {
			break
		}
	}
	for i := len(missing) - 1; i >= 0; i-- {
		if err := os.Mkdir(missing[i], 0o755); err != nil && !errors.Is(err, fs.ErrExist) {
			return err
		}
		o.created = append([]string{missing[i]}, o.created...)
	}
	return nil
}

// cleanUp puts back an old bundle a killed run moved aside (when the
// folder is missing) and removes unfinished new bundles, old bundles left
// over and the temporary files earlier versions of nlens left inside the
// folder. It runs under the lock, so nothing it touches is in use.
func (o *OutDir) cleanUp() error {
	parent := filepath.Dir(o.target)
	olds, err := filepath.Glob(globQuote(o.sibling(oldPrefix)) + "*")
	if err != nil {
		return err
	}
	news, err := filepath.Glob(globQuote(o.sibling(newPrefix)) + "*")
	if err != nil {
		return err
	}
	if _, err := os.Lstat(o.target); errors.Is(err, fs.ErrNotExist) && len(olds) > 0 {
		if err := os.Rename(olds[0], o.target); err != nil {
			return fmt.Errorf("put back the bundle an interrupted run moved aside (%s): %w", olds[0], err)
		}
		olds = olds[1:]
	}
	for _, p := range append(olds, news...) {
		if err := os.RemoveAll(p); err != nil {
			return fmt.Errorf("remove what an interrupted run left (%s): %w", p, err)
		}
	}
	if entries, err := os.ReadDir(o.target); err == nil {
		for _, e := range entries {
			if oldTempFile.MatchString(e.Name()) {
				if err := os.Remove(filepath.Join(o.target, e.Name())); err != nil {
					return err
				}
			}
		}
	}
	return syncDir(parent)
}

// globQuote escapes the characters filepath.Match treats as special.
func globQuote(s string) string {
	var b strings.Builder
	for _, r := range s {
		if strings.ContainsRune(`*?[\`, r) {
			b.WriteByte('\\')
		}
		b.WriteRune(r)
	}
	return b.String()
}

// oldTempFile matches the per-file temporary names earlier versions of
// nlens wrote inside the folder (".report.md.123456.tmp"); a killed run
// could leave them.
var oldTempFile = regexp.MustCompile(`^\.(report\.md|result\.json|references\.bib|(shifts|trajectories|measurements)(-[0-9]+)?\.(svg|png))\.[0-9]+\.tmp$`)

// Write renders the bundle of r and puts it in place of the folder's
// contents: report.md (with figure links), report.html (the same report
// as one self-contained page, figures inline), result.json (as --format json),
// references.bib (exactly the works report.md cites) and each
// comparison's figures as SVG and PNG. Everything is rendered in memory
// first, so nothing is written if any rendering fails; with Force, files
// in the folder that are not part of a bundle are carried over (hard
// links, or copies where the file system has none). It returns the names
// written, sorted.
func (o *OutDir) Write(r *rank.Result, kb *knowledge.Base) ([]string, error) {
	files, err := renderBundle(r, kb)
	if err != nil {
		return nil, err
	}
	names, err := o.writeFiles(files)
	if err != nil {
		return nil, &OutDirError{Dir: o.dir, Err: err}
	}
	return names, nil
}

// writeFiles writes the rendered files into a new sibling folder and swaps
// it in.
func (o *OutDir) writeFiles(files map[string][]byte) (names []string, err error) {
	tmp, err := makeNewDir(o.sibling(newPrefix))
	if err != nil {
		return nil, err
	}
	defer func() {
		if err != nil {
			os.RemoveAll(tmp)
		}
	}()
	for name := range files {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		if err := writeFile(filepath.Join(tmp, name), files[name]); err != nil {
			return nil, fmt.Errorf("write %s: %w", name, err)
		}
	}
	old, err := os.Stat(o.target)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		old = nil
	case err != nil:
		return nil, err
	default:
		if err := os.Chmod(tmp, old.Mode().Perm()); err != nil {
			return nil, err
		}
		if err := carryOver(o.target, tmp, files); err != nil {
			return nil, err
		}
	}
	if err := syncDir(tmp); err != nil {
		return nil, err
	}
	if err := o.swap(tmp, old != nil); err != nil {
		return nil, err
	}
	o.wrote = true
	return names, nil
}

// makeNewDir creates a directory named prefix and a random number, with
// the permissions a new directory gets (0755 less the umask; os.MkdirTemp
// would give 0700).
func makeNewDir(prefix string) (string, error) {
	for range 100 {
		name := prefix + strconv.FormatUint(rand.Uint64(), 36)
		err := os.Mkdir(name, 0o755)
		if err == nil {
			return name, nil
		}
		if !errors.Is(err, fs.ErrExist) {
			return "", err
		}
	}
	return "", fmt.Errorf("cannot find an unused name %s*", prefix)
}

// swap puts the folder tmp in place of the target. With an old folder, it
// is moved aside first and removed after; a crash between the two renames
// is repaired by the next run's cleanUp.
func (o *OutDir) swap(tmp string, hasOld bool) error {
	parent := filepath.Dir(o.target)
	if !hasOld {
		if err := os.Rename(tmp, o.target); err != nil {
			return err
		}
		return syncDir(parent)
	}
	aside := strings.Replace(tmp, newPrefix, oldPrefix, 1)
	if err := os.Rename(o.target, aside); err != nil {
		return fmt.Errorf("move the old bundle aside: %w", err)
	}
	if err := os.Rename(tmp, o.target); err != nil {
		if back := os.Rename(aside, o.target); back != nil {
			return fmt.Errorf("put the new bundle in place: %w (the old one is in %s)", err, aside)
		}
		return fmt.Errorf("put the new bundle in place: %w", err)
	}
	if err := syncDir(parent); err != nil {
		return err
	}
	return os.RemoveAll(aside)
}

// Release removes the lock and, if no bundle was written, the directories
// ReserveOutDir created. It may be called more than once.
func (o *OutDir) Release() error {
	var err error
	if o.lock != nil {
		err = o.lock.release()
		o.lock = nil
	}
	if !o.wrote {
		for _, d := range o.created {
			os.Remove(d) // only if empty
		}
	}
	o.created = nil
	return err
}

// WriteBundle reserves dir, writes the bundle of r into it and releases
// it (see OutDir.Write).
func WriteBundle(dir string, r *rank.Result, kb *knowledge.Base, opt BundleOptions) ([]string, error) {
	o, err := ReserveOutDir(dir, opt.Force)
	if err != nil {
		return nil, err
	}
	names, err := o.Write(r, kb)
	if rerr := o.Release(); err == nil && rerr != nil {
		return nil, &OutDirError{Dir: dir, Err: rerr}
	}
	return names, err
}

// renderBundle renders every file of the bundle into memory.
func renderBundle(r *rank.Result, kb *knowledge.Base) (map[string][]byte, error) {
	files := map[string][]byte{}
	// The Markdown report and the figures' SVG are rendered once, for
	// their own files and for the HTML page made from them.
	md, refs := markdownReport(r, kb, MarkdownOptions{Figures: true})
	md = EscapeText(md)
	files[BundleReport] = []byte(md)
	svgs, err := svgFigures(r)
	if err != nil {
		return nil, fmt.Errorf("render %s: %w", BundleHTML, err)
	}
	files[BundleHTML] = htmlPage(r, md, refs, svgs, HTMLOptions{FigureFiles: true})
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
		files[f.Base+"."+FigureSVG] = []byte(svgs[f.Base+"."+FigureSVG])
		buf.Reset()
		if err := Figure(&buf, r, f.Comparison, f.Kind, FigurePNG); err != nil {
			return nil, err
		}
		files[f.Base+"."+FigurePNG] = bytes.Clone(buf.Bytes())
	}
	return files, nil
}

// copyFile copies the regular file src to a new file dst, streaming, and
// syncs it.
func copyFile(src, dst string, perm fs.FileMode) error {
	in, err := os.Open(src)
	if err != nil {
		return err
	}
	defer in.Close()
	out, err := os.OpenFile(dst, os.O_WRONLY|os.O_CREATE|os.O_EXCL, perm)
	if err != nil {
		return err
	}
	if _, err := io.Copy(out, in); err != nil {
		out.Close()
		return err
	}
	if err := out.Sync(); err != nil {
		out.Close()
		return err
	}
	return out.Close()
}

// writeFile writes data to a new file and syncs it to disk.
func writeFile(path string, data []byte) error {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		return err
	}
	if _, err := io.Copy(f, bytes.NewReader(data)); err != nil {
		f.Close()
		return err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// syncDir flushes a directory's entries (new names, renames) to disk.
// File systems that cannot sync a directory are not an error.
func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer d.Close()
	if err := d.Sync(); err != nil && !errors.Is(err, syscall.EINVAL) {
		return err
	}
	return nil
}

// figureFile matches the names of the figures a bundle has.
var figureFile = regexp.MustCompile(`^(shifts|trajectories|measurements)(-[0-9]+)?\.(svg|png)$`)

// bundleFile reports whether name is a file some bundle writes (so an
// earlier bundle's file, not the user's).
func bundleFile(name string) bool {
	switch name {
	case BundleReport, BundleHTML, BundleResult, BundleReferences:
		return true
	}
	return figureFile.MatchString(name) || oldTempFile.MatchString(name)
}

// carryOver brings the user's files from the old folder into the new one:
// everything that is not a bundle file, by hard link (a copy where links
// are not possible), directories recreated, symbolic links remade.
func carryOver(from, to string, written map[string][]byte) error {
	entries, err := os.ReadDir(from)
	if err != nil {
		return err
	}
	for _, e := range entries {
		if _, ok := written[e.Name()]; ok || bundleFile(e.Name()) {
			continue
		}
		if err := mirror(filepath.Join(from, e.Name()), filepath.Join(to, e.Name())); err != nil {
			return err
		}
	}
	return nil
}

// mirror recreates src at dst: a directory with its contents, a regular
// file by hard link or copy, a symbolic link as a link to the same place.
// Anything else (a named pipe, a socket, a device) cannot be carried.
func mirror(src, dst string) error {
	fi, err := os.Lstat(src)
	if err != nil {
		return err
	}
	switch {
	case fi.Mode()&fs.ModeSymlink != 0:
		link, err := os.Readlink(src)
		if err != nil {
			return err
		}
		return os.Symlink(link, dst)
	case fi.IsDir():
		if err := os.Mkdir(dst, fi.Mode().Perm()); err != nil {
			return err
		}
		entries, err := os.ReadDir(src)
		if err != nil {
			return err
		}
		for _, e := range entries {
			if err := mirror(filepath.Join(src, e.Name()), filepath.Join(dst, e.Name())); err != nil {
				return err
			}
		}
		return nil
	case fi.Mode().IsRegular():
		if os.Link(src, dst) == nil {
			return nil
		}
		return copyFile(src, dst, fi.Mode().Perm())
	}
	return fmt.Errorf("%s is not a file, folder or link, so nlens cannot carry it into the new bundle; move it elsewhere", src)
}
