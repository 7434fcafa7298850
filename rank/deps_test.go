package rank

import (
	"go/ast"
	"go/parser"
	"go/token"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// The architecture of DEVELOPERS.md, as a test over every package of the
// module (its non-test files, read with go/parser):
//
//	cmd → rank/report → rank → {rank/study, forward, rules, knowledge}
//	rank/study → {forward, rules, knowledge}; rules → knowledge
//	forward → knowledge; knowledge → knowledge/input → nothing
//
// Renderers (rank/report) import no rules; only commands import cobra; and
// libraries (everything but cmd/) never write to os.Stdout or os.Stderr,
// print with fmt.Print or log, or exit the process. A package the table
// does not know fails the test, so a new one must be placed in it.

// allowedImports lists, for each package, the module packages it may
// import (knowledge/input counts as part of knowledge).
var allowedImports = map[string][]string{
	"cmd/nlens":             {"*"},
	"rank/report":           {"rank", "rank/study", "forward", "knowledge", "knowledge/input"},
	"rank":                  {"rank/study", "forward", "rules", "knowledge", "knowledge/input"},
	"rank/study":            {"forward", "rules", "knowledge", "knowledge/input"},
	"rules":                 {"knowledge", "knowledge/input"},
	"forward":               {"knowledge", "knowledge/input"},
	"knowledge":             {"knowledge/input"},
	"knowledge/input":       {},
	"knowledge/inputtest":   {},
	"rank/study/sampletest": {},
}

// commandOnly are outside packages only commands may import.
var commandOnly = []string{"github.com/spf13/cobra"}

// forbiddenCalls are what a library must not use: the process's own
// streams and exit.
var forbiddenCalls = map[string][]string{
	"os":  {"Stdout", "Stderr", "Exit"},
	"fmt": {"Print", "Printf", "Println"},
	"log": {"*"},
}

// sourceFile is a parsed non-test file and its path relative to the module.
type sourceFile struct {
	name string
	ast  *ast.File
}

// modulePackages reads the module below root: package dir (relative,
// slash-separated) → its non-test files, parsed.
func modulePackages(t *testing.T, root string) (module string, pkgs map[string][]sourceFile) {
	t.Helper()
	mod, err := os.ReadFile(filepath.Join(root, "go.mod"))
	if err != nil {
		t.Fatal(err)
	}
	for _, l := range strings.Split(string(mod), "\n") {
		if m, ok := strings.CutPrefix(l, "module "); ok {
			module = strings.TrimSpace(m)
		}
	}
	pkgs = map[string][]sourceFile{}
	fset := token.NewFileSet()
	err = filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		name := d.Name()
		if d.IsDir() && path != root && (name == "testdata" || strings.HasPrefix(name, ".") || strings.HasPrefix(name, "_")) {
			return filepath.SkipDir
		}
		if d.IsDir() || !strings.HasSuffix(name, ".go") || strings.HasSuffix(name, "_test.go") {
			return nil
		}
		f, err := parser.ParseFile(fset, path, nil, parser.SkipObjectResolution)
		if err != nil {
			return err
		}
		rel, err := filepath.Rel(root, path)
		if err != nil {
			return err
		}
		dir := filepath.ToSlash(filepath.Dir(rel))
		pkgs[dir] = append(pkgs[dir], sourceFile{filepath.ToSlash(rel), f})
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return module, pkgs
}

func TestArchitecture(t *testing.T) {
	t.Parallel()
	root, err := filepath.Abs("..")
	if err != nil {
		t.Fatal(err)
	}
	module, pkgs := modulePackages(t, root)
	if len(pkgs) < len(allowedImports) {
		t.Fatalf("found %d packages below %s, fewer than the %d the rules name", len(pkgs), root, len(allowedImports))
	}
	for dir, files := range pkgs {
		allowed, known := allowedImports[dir]
		if !known {
			t.Errorf("package %s is not in allowedImports: place it in the architecture (DEVELOPERS.md) and here", dir)
			continue
		}
		command := strings.HasPrefix(dir, "cmd/")
		for _, sf := range files {
			name, f := sf.name, sf.ast
			for _, imp := range f.Imports {
				path, _ := strconv.Unquote(imp.Path.Value)
				if own, ok := strings.CutPrefix(path, module+"/"); ok {
					if !slices.Contains(allowed, "*") && !slices.Contains(allowed, own) {
						t.Errorf("%s imports %s; %s may import only %v", name, own, dir, allowed)
					}
				}
				if !command && slices.Contains(commandOnly, path) {
					t.Errorf("%s imports %s, which only commands may", name, path)
				}
			}
			if !command {
				for _, use := range forbiddenUses(f) {
					t.Errorf("%s uses %s: libraries take an io.Writer and return errors", name, use)
				}
			}
		}
	}
}

// forbiddenUses lists the selectors of forbiddenCalls a file uses (with
// the import names the file gives those packages).
func forbiddenUses(f *ast.File) []string {
	local := map[string]string{} // name in the file → import path
	for _, imp := range f.Imports {
		path, _ := strconv.Unquote(imp.Path.Value)
		name := path[strings.LastIndex(path, "/")+1:]
		if imp.Name != nil {
			name = imp.Name.Name
		}
		local[name] = path
	}
	var uses []string
	ast.Inspect(f, func(n ast.Node) bool {
		sel, ok := n.(*ast.SelectorExpr)
		if !ok {
			return true
		}
		x, ok := sel.X.(*ast.Ident)
		if !ok {
			return true
		}
		names, ok := forbiddenCalls[local[x.Name]]
		if ok && (slices.Contains(names, "*") || slices.Contains(names, sel.Sel.Name)) {
			uses = append(uses, local[x.Name]+"."+sel.Sel.Name)
		}
		return true
	})
	return uses
}
