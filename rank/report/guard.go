package report

import (
	"cmp"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strings"
	"unicode"
)

// NonFiniteError names a quantity of a result that is NaN or infinite, so
// it can be refused before anything is printed: a table would show "NaN",
// and JSON cannot hold it at all.
type NonFiniteError struct {
	// Path is where the quantity sits in the result, with field names in
	// snake case, list indices in brackets and map keys quoted:
	// comparisons[0].hypotheses[3].posterior.
	Path  string
	Value float64
}

func (e *NonFiniteError) Error() string {
	why := "not a number: the computation met an undefined operation such as 0/0 or ∞ − ∞"
	if math.IsInf(e.Value, 0) {
		why = "beyond the floating-point range of ±1.8e308"
	}
	return fmt.Sprintf("%s is %v, %s", e.Path, e.Value, why)
}

// CheckFinite walks v (structs, pointers, slices, arrays, maps and
// interfaces, through exported fields only, the ones a renderer can see)
// and returns a *NonFiniteError for the first float that is NaN or ±Inf,
// in field order, list order and sorted map-key order; nil when every
// number is finite. It reads any result type by reflection, so it keeps
// working as result types gain and lose fields. A struct field tagged
// `finite:"-"` is an input description, not a result, and is skipped (a
// sustained change's window ends at +Inf).
func CheckFinite(v any) error {
	w := finiteWalker{seen: map[seenKey]bool{}}
	return w.walk(reflect.ValueOf(v), "")
}

type finiteWalker struct {
	seen map[seenKey]bool // pointers already walked (shared or cyclic data)
}

// seenKey is a pointer with its type: a struct and its first field share
// an address.
type seenKey struct {
	p uintptr
	t reflect.Type
}

func (w *finiteWalker) walk(v reflect.Value, path string) error {
	switch v.Kind() {
	case reflect.Float32, reflect.Float64:
		if f := v.Float(); math.IsNaN(f) || math.IsInf(f, 0) {
			return &NonFiniteError{Path: path, Value: f}
		}
	case reflect.Complex64, reflect.Complex128:
		c := v.Complex()
		for _, f := range []float64{real(c), imag(c)} {
			if math.IsNaN(f) || math.IsInf(f, 0) {
				return &NonFiniteError{Path: path, Value: f}
			}
		}
	case reflect.Pointer:
		k := seenKey{v.Pointer(), v.Type()}
		if v.IsNil() || w.seen[k] {
			return nil
		}
		w.seen[k] = true
		return w.walk(v.Elem(), path)
	case reflect.Interface:
		if v.IsNil() {
			return nil
		}
		return w.walk(v.Elem(), path)
	case reflect.Struct:
		t := v.Type()
		for i := range t.NumField() {
			f := t.Field(i)
			if !f.IsExported() || f.Tag.Get("finite") == "-" {
				continue
			}
			name := path
			if !f.Anonymous {
				name = joinPath(path, snakeCase(f.Name))
			}
			if err := w.walk(v.Field(i), name); err != nil {
				return err
			}
		}
	case reflect.Slice, reflect.Array:
		if !hasFloat(v.Type().Elem(), map[reflect.Type]bool{}) {
			return nil
		}
		for i := range v.Len() {
			if err := w.walk(v.Index(i), fmt.Sprintf("%s[%d]", path, i)); err != nil {
				return err
			}
		}
	case reflect.Map:
		keys := v.MapKeys()
		slices.SortFunc(keys, func(a, b reflect.Value) int { return cmp.Compare(fmt.Sprint(a), fmt.Sprint(b)) })
		for _, k := range keys {
			if err := w.walk(v.MapIndex(k), fmt.Sprintf("%s[%q]", path, fmt.Sprint(k))); err != nil {
				return err
			}
		}
	}
	return nil
}

// hasFloat reports whether values of type t can hold a float (so long
// lists of strings or integers are not walked element by element).
func hasFloat(t reflect.Type, seen map[reflect.Type]bool) bool {
	if seen[t] {
		return false
	}
	seen[t] = true
	switch t.Kind() {
	case reflect.Float32, reflect.Float64, reflect.Complex64, reflect.Complex128, reflect.Interface:
		return true
	case reflect.Pointer, reflect.Slice, reflect.Array:
		return hasFloat(t.Elem(), seen)
	case reflect.Map:
		return hasFloat(t.Elem(), seen)
	case reflect.Struct:
		for i := range t.NumField() {
			if f := t.Field(i); f.IsExported() && hasFloat(f.Type, seen) {
				return true
			}
		}
	}
	return false
}

func joinPath(path, name string) string {
	if path == "" {
		return name
	}
	return path + "." + name
}

// snakeCase writes a Go field name in snake case: LogEvidence →
// log_evidence, NoiseSD → noise_sd, N14 → n14, RateKgPerHaYr →
// rate_kg_per_ha_yr.
func snakeCase(name string) string {
	r := []rune(name)
	var b strings.Builder
	for i, c := range r {
		if unicode.IsUpper(c) && i > 0 {
			prevLower := unicode.IsLower(r[i-1]) || unicode.IsDigit(r[i-1])
			nextLower := i+1 < len(r) && unicode.IsLower(r[i+1])
			if prevLower || (unicode.IsUpper(r[i-1]) && nextLower) {
				b.WriteByte('_')
			}
		}
		b.WriteRune(unicode.ToLower(c))
	}
	return b.String()
}
