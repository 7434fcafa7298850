package rank

import (
	"go/parser"
	"go/token"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// Dependencies point one way (STYLE 4): forward imports only knowledge;
// rank, rules, knowledge and forward never import cobra or the report
// package, and no library writes to os.Stdout or exits the process.
func TestDependencyRules(t *testing.T) {
	t.Parallel()
	forbidden := map[string][]string{
		"../forward":   {"github.com/spf13/cobra", "nlens/rank", "nlens/rules"},
		"../knowledge": {"github.com/spf13/cobra", "nlens/rank", "nlens/forward", "nlens/rules"},
		"../rules":     {"github.com/spf13/cobra", "nlens/rank", "nlens/forward"},
		".":            {"github.com/spf13/cobra", "nlens/rank/report"},
		"study":        {"github.com/spf13/cobra", "nlens/rank/report"},
		"report":       {"github.com/spf13/cobra"},
	}
	for dir, bad := range forbidden {
		files, err := filepath.Glob(filepath.Join(dir, "*.go"))
		if err != nil {
			t.Fatal(err)
		}
		for _, f := range files {
			if strings.HasSuffix(f, "_test.go") {
				continue
			}
			src, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			file, err := parser.ParseFile(token.NewFileSet(), f, src, parser.ImportsOnly)
			if err != nil {
				t.Fatal(err)
			}
			for _, imp := range file.Imports {
				path := strings.Trim(imp.Path.Value, `"`)
				for _, b := range bad {
					if path == b || strings.HasPrefix(path, b+"/") {
						t.Errorf("%s imports %s", f, path)
					}
				}
			}
			for _, s := range []string{"os.Stdout", "os.Exit("} {
				if strings.Contains(string(src), s) {
					t.Errorf("%s uses %s: libraries take an io.Writer and return errors", f, s)
				}
			}
		}
	}
}
