package study

import (
	"fmt"
	"nlens/knowledge/input"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"

	"nlens/forward"
)

// SamplesSpec is the samples entry of a study file (DESIGN §6): a file name
// (the short form, samples: samples.csv) or a mapping (the long form) that
// lets a lab's file be used unchanged:
//
//	samples:
//	  file: results.xlsx        # .csv or .xlsx, relative to the study file
//	  sheet: δ15N               # .xlsx only; default the first visible sheet
//	  header_row: 3             # default: the first row holding every mapped column
//	  columns: {sample: "Sample ID", group: Treatment, observable: Material, value: "d15N (permil)"}
//	  values: {observable: {Leaf: foliage, "Soil 0-10": soil, Standard: ignore}}
//	  unit: permil              # where there is no unit column: permil | atom%
//
// A role not in columns keeps its own name as its header; with columns
// given, other columns of the file are listed as not used instead of being
// refused. values maps the lab's texts of observable, group or unit (case
// and spacing ignored) to nlens's; "ignore" as an observable leaves those
// rows out (reference materials, blanks), counted in the check output.
type SamplesSpec struct {
	File      string
	Sheet     string
	HeaderRow int
	Columns   map[string]string            // role → the lab's header
	Values    map[string]map[string]string // role → normalized lab text → nlens text
	Unit      string                       // UnitPermil or UnitAtomPercent; "" means permil

	set       bool           // the study has a samples entry
	long      bool           // written as a mapping
	lines     map[string]int // key → line in the study file
	problems  []specProblem
	studyFile string
}

// specProblem is a problem in the samples entry, found while decoding
// (when the study file's name is not yet known).
type specProblem struct {
	line       int
	field, msg string
}

// ignoreValue, as the target of values.observable, leaves those rows out.
const ignoreValue = "ignore"

var (
	specKeys    = []string{"file", "sheet", "header_row", "columns", "values", "unit"}
	valuesRoles = []string{"observable", "group", "unit"}
)

// UnmarshalYAML accepts a file name or the long-form mapping. Problems are
// kept with their lines and reported by the study (with the file name)
// rather than returned here, where the YAML package would drop the line.
func (s *SamplesSpec) UnmarshalYAML(n *yaml.Node) error {
	*s = SamplesSpec{set: true, lines: map[string]int{"": n.Line}}
	n = resolveAlias(n)
	bad := func(line int, field, format string, args ...any) {
		s.problems = append(s.problems, specProblem{line, field, fmt.Sprintf(format, args...)})
	}
	switch n.Kind {
	case yaml.ScalarNode:
		if n.Tag != "!!str" || strings.TrimSpace(n.Value) == "" {
			bad(n.Line, "samples", "expected the name of a .csv or .xlsx file, or a mapping {file, sheet, header_row, columns, values, unit}")
			return nil
		}
		s.File = n.Value
		return nil
	case yaml.MappingNode:
		s.long = true
	default:
		bad(n.Line, "samples", "expected the name of a .csv or .xlsx file, or a mapping {file, sheet, header_row, columns, values, unit}")
		return nil
	}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := resolveAlias(n.Content[i]), resolveAlias(n.Content[i+1])
		key := k.Value
		field := "samples." + escapeText(key)
		if _, dup := s.lines[key]; dup && key != "" {
			bad(k.Line, field, "the key appears twice in one mapping (first at line %d)", s.lines[key])
			continue
		}
		s.lines[key] = k.Line
		text := func() (string, bool) {
			if v.Kind != yaml.ScalarNode || v.Tag == "!!null" || strings.TrimSpace(v.Value) == "" {
				bad(v.Line, field, "expected a text value")
				return "", false
			}
			return v.Value, true
		}
		switch key {
		case "file":
			s.File, _ = text()
		case "sheet":
			s.Sheet, _ = text()
		case "header_row":
			row, err := strconv.Atoi(v.Value)
			if v.Kind != yaml.ScalarNode || v.Tag != "!!int" || err != nil || row < 1 {
				bad(v.Line, field, "expected a row number ≥ 1 (the header's line in a CSV file, its row in a sheet), got %q", v.Value)
				continue
			}
			s.HeaderRow = row
		case "unit":
			if u, ok := text(); ok {
				if s.Unit = deltaUnit(u); s.Unit == "" {
					bad(v.Line, field, "unit %q: expected %s", u, acceptedUnits)
				}
			}
		case "columns":
			s.decodeColumns(v, bad)
		case "values":
			s.decodeValues(v, bad)
		default:
			bad(k.Line, field, "unknown key (keys here: %s)", strings.Join(specKeys, ", "))
		}
	}
	if s.File == "" && !slices.ContainsFunc(s.problems, func(p specProblem) bool { return p.field == "samples.file" }) {
		bad(n.Line, "samples.file", "missing: the .csv or .xlsx file to read")
	}
	return nil
}

// decodeColumns reads columns: {ROLE: HEADER}.
func (s *SamplesSpec) decodeColumns(v *yaml.Node, bad func(int, string, string, ...any)) {
	if v.Kind != yaml.MappingNode {
		bad(v.Line, "samples.columns", "expected a mapping {ROLE: HEADER} with roles %s", strings.Join(allRoles, ", "))
		return
	}
	s.Columns = map[string]string{}
	byHeader := map[string]string{}
	for i := 0; i+1 < len(v.Content); i += 2 {
		k, h := resolveAlias(v.Content[i]), resolveAlias(v.Content[i+1])
		role := k.Value
		field := "samples.columns." + escapeText(role)
		switch {
		case !slices.Contains(allRoles, role):
			bad(k.Line, field, "unknown column role (roles: %s)", strings.Join(allRoles, ", "))
		case h.Kind != yaml.ScalarNode || h.Tag == "!!null" || normHeader(h.Value) == "":
			bad(h.Line, field, "expected the header of the lab's column")
		case byHeader[normHeader(h.Value)] != "":
			bad(h.Line, field, "header %q is already the column of %s", h.Value, byHeader[normHeader(h.Value)])
		default:
			if _, dup := s.Columns[role]; dup {
				bad(k.Line, field, "the key appears twice in one mapping")
				continue
			}
			s.Columns[role] = h.Value
			byHeader[normHeader(h.Value)] = role
		}
	}
}

// decodeValues reads values: {ROLE: {LAB TEXT: NLENS TEXT}}.
func (s *SamplesSpec) decodeValues(v *yaml.Node, bad func(int, string, string, ...any)) {
	if v.Kind != yaml.MappingNode {
		bad(v.Line, "samples.values", "expected a mapping such as {observable: {Leaf: foliage}} (roles: %s)", strings.Join(valuesRoles, ", "))
		return
	}
	s.Values = map[string]map[string]string{}
	for i := 0; i+1 < len(v.Content); i += 2 {
		k, m := resolveAlias(v.Content[i]), resolveAlias(v.Content[i+1])
		role := k.Value
		field := "samples.values." + escapeText(role)
		if !slices.Contains(valuesRoles, role) {
			bad(k.Line, field, "values can rename %s, not %q", strings.Join(valuesRoles, ", "), role)
			continue
		}
		if m.Kind != yaml.MappingNode {
			bad(m.Line, field, "expected a mapping {LAB TEXT: NLENS TEXT}")
			continue
		}
		if s.Values[role] == nil {
			s.Values[role] = map[string]string{}
		}
		for j := 0; j+1 < len(m.Content); j += 2 {
			from, to := resolveAlias(m.Content[j]), resolveAlias(m.Content[j+1])
			f := field + "." + escapeText(from.Value)
			key := normHeader(from.Value)
			if to.Kind != yaml.ScalarNode || to.Tag == "!!null" || strings.TrimSpace(to.Value) == "" {
				bad(to.Line, f, "expected the text nlens should read instead")
				continue
			}
			target := strings.TrimSpace(to.Value)
			switch {
			case key == "":
				bad(from.Line, field, "an empty text cannot be renamed")
				continue
			case s.Values[role][key] != "":
				bad(from.Line, f, "%q is renamed twice (texts compare without case and spacing)", from.Value)
				continue
			case role == "observable" && target != ignoreValue && !forward.KnownObservable(target):
				bad(to.Line, f, "unknown observable %q (use foliage, roots, litter, soil, soil-ammonium, soil-nitrate, leachate-nitrate, fungi, n2o, nitrate-d18o, ecosystem, pool:<pool>, flux:<process>, or ignore to leave the rows out)", target)
				continue
			case role == "unit" && deltaUnit(target) == "":
				bad(to.Line, f, "unit %q: expected %s", target, acceptedUnits)
				continue
			}
			s.Values[role][key] = target
		}
	}
}

func resolveAlias(n *yaml.Node) *yaml.Node {
	for i := 0; n.Kind == yaml.AliasNode && n.Alias != nil && i < 100; i++ {
		n = n.Alias
	}
	return n
}

// given reports whether the study has a samples entry.
func (s *SamplesSpec) given() bool { return s.set || s.File != "" }

// columnSet is how the file's headers name the roles.
func (s *SamplesSpec) columnSet() *columnSet {
	return &columnSet{mapped: s.Columns, strict: len(s.Columns) == 0}
}

// mapValue renames a lab's text by values[role], noting that the text
// occurred; other texts are kept.
func (s *SamplesSpec) mapValue(role, text string, used map[string]map[string]bool) string {
	m := s.Values[role]
	if m == nil {
		return text
	}
	key := normHeader(text)
	to, ok := m[key]
	if !ok {
		return text
	}
	if used[role] == nil {
		used[role] = map[string]bool{}
	}
	used[role][key] = true
	return to
}

// unusedValueWarnings names the texts values renames that no row holds:
// most often a misspelling.
func (s *SamplesSpec) unusedValueWarnings(file string, used map[string]map[string]bool) []string {
	var warns []string
	for _, role := range valuesRoles {
		var missing []string
		for key := range s.Values[role] {
			if !used[role][key] {
				missing = append(missing, strconv.Quote(key))
			}
		}
		sort.Strings(missing)
		if len(missing) > 0 {
			warns = append(warns, fmt.Sprintf("%s: no row has the %s %s, which samples.values.%s renames", file, role, strings.Join(missing, ", "), role))
		}
	}
	return warns
}

// headerRowError says that header_row names a row that holds nothing.
func (s *SamplesSpec) headerRowError(g *grid) error {
	what := fmt.Sprintf("line %d of %s is blank, a comment or inside a quoted cell", s.HeaderRow, g.file)
	if g.sheet != "" {
		what = fmt.Sprintf("row %d of sheet %s is empty", s.HeaderRow, sheetRef(g.sheet))
	}
	if s.studyFile == "" {
		return &input.Error{File: g.file, Line: 1, Field: "header_row", Msg: what + "; the header must be there"}
	}
	return &input.Error{File: s.studyFile, Line: s.lines["header_row"], Field: "samples.header_row", Msg: what + "; the header must be there"}
}

// specErrors returns the problems of the entry, positioned in the study
// file.
func (s *SamplesSpec) specErrors(studyFile string) error {
	var errs input.Errors
	for _, p := range s.problems {
		errs = append(errs, &input.Error{File: studyFile, Line: p.line, Field: p.field, Msg: p.msg})
	}
	return errs.Err()
}

// load reads the samples file the study names, relative to the study
// file's folder. When the file cannot be read, unread says so and err is
// nil, so that the study can go on to report its other problems.
func (s *SamplesSpec) load(doc *input.Doc, readFile func(string) ([]byte, error), site *forward.Site, opt Options) (res *Samples, unread *input.Error, err error) {
	if err := s.specErrors(doc.File); err != nil {
		return nil, nil, err
	}
	s.studyFile = doc.File
	path := s.File
	if !filepath.IsAbs(path) {
		path = filepath.Join(filepath.Dir(doc.File), path)
	}
	field, at := "samples", []any{"samples"}
	if s.long {
		field, at = "samples.file", []any{"samples", "file"}
	}
	data, rerr := readFile(path)
	if rerr != nil {
		return nil, doc.Errorf(field, at, "cannot read samples file %s: %s", escapeText(path), escapeText(unwrapPathError(rerr).Error())), nil
	}
	res, err = ReadSamples(escapeText(path), data, s, site, opt)
	return res, nil, err
}
