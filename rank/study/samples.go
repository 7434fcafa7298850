package study

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/stat"

	"nlens/forward"
	"nlens/knowledge"
)

// SampleGroup is one group's statistics of one observable, from CSV rows.
type SampleGroup struct {
	Group, Observable string
	Stat
	Line int // first row of the group
}

var (
	requiredColumns = []string{"sample", "group", "observable"}
	optionalColumns = []string{"unit", "depth_cm", "species", "note"}
	permilUnits     = []string{"", "‰", "permil", "per mil", "per mille", "‰ air", "‰ vs air", "‰ vsmow"}
)

// ParseSamples reads the per-sample CSV (DESIGN §6): a header row with
// sample, group, observable and value (or d15n), optionally unit, depth_cm,
// species and note. Every bad row is an error with its line; groups are
// summarised by mean, sample sd and n.
func ParseSamples(file string, data []byte, site *forward.Site, opt Options) (rows []SampleGroup, warnings []string, err error) {
	defer knowledge.Recover(file, "samples file", &err)
	r := csv.NewReader(bytes.NewReader(data))
	r.FieldsPerRecord = -1
	r.TrimLeadingSpace = true
	r.Comment = '#'
	header, err := r.Read()
	if err != nil {
		if errors.Is(err, io.EOF) {
			return nil, nil, &knowledge.InputError{File: file, Line: 1, Msg: "the samples file is empty; expected a header row sample,group,observable,value"}
		}
		return nil, nil, csvError(file, err)
	}
	headerLine, _ := r.FieldPos(0) // comment and blank lines may come first
	col := map[string]int{}
	for i, h := range header {
		h = strings.ToLower(strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")))
		name := h
		if h == "d15n" {
			h = "value"
		}
		if _, dup := col[h]; dup {
			msg := "column appears twice in the header"
			if h == "value" {
				msg = "the header has both value and d15n; give the δ15N values in one column"
			}
			return nil, nil, &knowledge.InputError{File: file, Line: headerLine, Field: name, Msg: msg}
		}
		if !slices.Contains(requiredColumns, h) && !slices.Contains(optionalColumns, h) && h != "value" {
			msg := fmt.Sprintf("unknown column %q (columns: sample, group, observable, value or d15n, unit, depth_cm, species, note)", name)
			if len(header) == 1 && strings.ContainsAny(name, ";\t") {
				msg = fmt.Sprintf("unknown column %q: the columns must be separated by commas, not semicolons or tabs", name)
			}
			return nil, nil, &knowledge.InputError{File: file, Line: headerLine, Field: name, Msg: msg}
		}
		col[h] = i
	}
	for _, c := range append(requiredColumns, "value") {
		if _, ok := col[c]; !ok {
			return nil, nil, &knowledge.InputError{File: file, Line: headerLine, Field: c, Msg: fmt.Sprintf("missing column %q (the header needs sample, group, observable and value or d15n)", c)}
		}
	}
	type key struct{ group, obs string }
	type acc struct {
		values []float64
		line   int
		unit   string
		depths map[string]bool
	}
	groups := map[key]*acc{}
	var order []key
	seen := map[string]int{} // sample|observable → line
	var errs knowledge.InputErrors
	for {
		rec, err := r.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			// r.FieldPos must not be called here: after a malformed row it
			// may know no field and panic. The ParseError has the line.
			errs = append(errs, csvError(file, err))
			if len(errs) > 20 {
				break
			}
			continue
		}
		line, _ := r.FieldPos(0)
		get := func(c string) string {
			if i, ok := col[c]; ok && i < len(rec) {
				return strings.TrimSpace(rec[i])
			}
			return ""
		}
		bad := func(field, format string, args ...any) {
			errs = append(errs, &knowledge.InputError{File: file, Line: line, Field: field, Msg: fmt.Sprintf(format, args...)})
		}
		if len(rec) != len(header) {
			bad("", "expected %d fields like the header, got %d", len(header), len(rec))
			continue
		}
		sample, group, obs, value := get("sample"), get("group"), get("observable"), get("value")
		switch {
		case sample == "":
			bad("sample", "missing sample id")
			continue
		case group == "":
			bad("group", "missing group")
			continue
		}
		if msg := checkObservable(site, obs); msg != "" {
			bad("observable", "%s", msg)
			continue
		}
		v, err := strconv.ParseFloat(value, 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			bad("value", "expected a number, got %q", value)
			continue
		}
		logRatio := forward.LogRatioName(obs)
		if msg := valueProblem(obs, v, opt); msg != "" {
			bad("value", "%s", msg)
			continue
		}
		unit := strings.ToLower(get("unit"))
		if !logRatio && !slices.Contains(permilUnits, unit) {
			bad("unit", "δ values are in ‰ (permil); got unit %q", get("unit"))
			continue
		}
		if d := get("depth_cm"); d != "" {
			if _, err := strconv.ParseFloat(strings.ReplaceAll(d, "–", "-"), 64); err != nil && !isDepthRange(d) {
				bad("depth_cm", "expected a depth in cm such as 10 or 0-10, got %q", d)
				continue
			}
		}
		sk := sample + "\x00" + obs
		if prev, dup := seen[sk]; dup {
			bad("sample", "sample %q already has a value of %s on line %d", sample, obs, prev)
			continue
		}
		seen[sk] = line
		k := key{group, obs}
		a := groups[k]
		if a == nil {
			a = &acc{line: line, unit: unit, depths: map[string]bool{}}
			groups[k] = a
			order = append(order, k)
		}
		if unit != a.unit && logRatio {
			bad("unit", "unit %q differs from %q used for %s in group %q on line %d", get("unit"), a.unit, obs, group, a.line)
			continue
		}
		a.values = append(a.values, v)
		a.depths[get("depth_cm")] = true
	}
	if len(errs) > 0 {
		return nil, nil, errs
	}
	if len(order) == 0 {
		return nil, nil, &knowledge.InputError{File: file, Line: 1, Msg: "the samples file has a header but no rows"}
	}
	var out []SampleGroup
	var warns []string
	for _, k := range order {
		a := groups[k]
		if len(a.values) < 2 {
			errs = append(errs, &knowledge.InputError{File: file, Line: a.line, Field: "group", Msg: fmt.Sprintf("group %q has only one sample of %s; a standard error needs n ≥ 2", k.group, k.obs)})
			continue
		}
		mean, sd := stat.MeanStdDev(a.values, nil)
		if math.IsNaN(mean) || math.IsInf(mean, 0) || math.IsNaN(sd) || math.IsInf(sd, 0) {
			errs = append(errs, &knowledge.InputError{File: file, Line: a.line, Field: "value", Msg: fmt.Sprintf("the mean or sd of %s in group %q is beyond floating-point range; check the values", k.obs, k.group)})
			continue
		}
		out = append(out, SampleGroup{Group: k.group, Observable: k.obs, Stat: Stat{Mean: mean, SD: sd, N: len(a.values)}, Line: a.line})
		if len(a.depths) > 1 {
			warns = append(warns, fmt.Sprintf("%s:%d: group %q pools %s samples from %d different depths as replicates", file, a.line, k.group, k.obs, len(a.depths)))
		}
	}
	if len(errs) > 0 {
		return nil, nil, errs
	}
	return out, warns, nil
}

func isDepthRange(s string) bool {
	a, b, ok := strings.Cut(strings.ReplaceAll(s, "–", "-"), "-")
	if !ok {
		return false
	}
	_, e1 := strconv.ParseFloat(strings.TrimSpace(a), 64)
	_, e2 := strconv.ParseFloat(strings.TrimSpace(b), 64)
	return e1 == nil && e2 == nil
}

func csvError(file string, err error) *knowledge.InputError {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return &knowledge.InputError{File: file, Line: pe.StartLine, Msg: fmt.Sprintf("unreadable CSV row: %v", pe.Err)}
	}
	return &knowledge.InputError{File: file, Msg: fmt.Sprintf("unreadable CSV: %v", err)}
}

func asPathError(err error, target **os.PathError) bool { return errors.As(err, target) }
