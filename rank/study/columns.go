package study

import (
	"fmt"
	"slices"
	"strings"
	"unicode"
)

// The columns of a samples table (DESIGN §6), by role. A role's column is
// found by its header: the role's own name (value also as d15n), or, in the
// long form of samples, the lab's header that `columns` maps it to.
var (
	requiredRoles = []string{"sample", "group", "observable", "value"}
	optionalRoles = []string{"unit", "depth_cm", "horizon", "block", "species", "note"}
	allRoles      = append(slices.Clone(requiredRoles), optionalRoles...)
)

// defaultHeaders are the header texts each role is known by when `columns`
// does not map it.
var defaultHeaders = map[string][]string{
	"value": {"value", "d15n", "δ15n"},
}

// columnSet knows which header names which role.
type columnSet struct {
	// mapped holds the lab's header for each role `columns` maps.
	mapped map[string]string
	// strict makes a column that names no role an error (the short form:
	// a file written for nlens); otherwise such columns are listed as not
	// used (a lab's file used unchanged).
	strict bool
}

// normHeader is how headers are compared: white space (including no-break
// spaces and a byte-order mark) trimmed and collapsed, case folded.
func normHeader(s string) string {
	s = strings.Map(func(r rune) rune {
		if r == '\ufeff' {
			return -1
		}
		if unicode.IsSpace(r) {
			return ' '
		}
		return r
	}, s)
	return strings.ToLower(strings.Join(strings.Fields(s), " "))
}

// role returns the role whose column header is h, or "".
func (cs *columnSet) role(h string) string {
	h = normHeader(h)
	if h == "" {
		return ""
	}
	for _, role := range allRoles {
		if text, ok := cs.mapped[role]; ok && normHeader(text) == h {
			return role
		}
	}
	for _, role := range allRoles {
		if _, ok := cs.mapped[role]; ok {
			continue
		}
		names := defaultHeaders[role]
		if names == nil {
			names = []string{role}
		}
		if slices.Contains(names, h) {
			return role
		}
	}
	return ""
}

// label names a role's column in a message: the role, or the lab's header
// it is mapped to.
func (cs *columnSet) label(role string) string {
	if text, ok := cs.mapped[role]; ok {
		return escapeText(text)
	}
	return role
}

// headerMatch is a row read as the header.
type headerMatch struct {
	index   int // index of the row in the grid; -1 when there is none
	pos     int // its line or row number
	matched int // how many required roles it names
}

func (h headerMatch) complete() bool { return h.index >= 0 && h.matched == len(requiredRoles) }

// findHeader returns the header row: the row at headerRow when it is given
// (index -1 when no row is there), else the first row naming every
// required role, else the row naming most of them (the first such row), so
// that the message about missing columns points at the row meant as the
// header.
func (cs *columnSet) findHeader(g *grid, headerRow int) headerMatch {
	best := headerMatch{index: -1}
	for i, r := range g.rows {
		if headerRow > 0 && r.pos != headerRow {
			continue
		}
		if headerRow <= 0 && i >= detectWindow {
			break
		}
		seen := map[string]bool{}
		for _, c := range r.cells {
			if role := cs.role(c); slices.Contains(requiredRoles, role) {
				seen[role] = true
			}
		}
		h := headerMatch{index: i, pos: r.pos, matched: len(seen)}
		if h.complete() || headerRow > 0 {
			return h
		}
		if best.index < 0 || h.matched > best.matched {
			best = h
		}
	}
	return best
}

// missingColumnMsg says that a required role has no column.
func (cs *columnSet) missingColumnMsg(role string) string {
	if text, ok := cs.mapped[role]; ok {
		return fmt.Sprintf("missing column %q, which columns.%s names (the header is the first row holding every mapped column; check the spelling or give header_row)", text, role)
	}
	return fmt.Sprintf("missing column %q (the header needs sample, group, observable and value or d15n)", role)
}

// noHeaderMsg says that no row (or not the row header_row names) names any
// required column.
func (cs *columnSet) noHeaderMsg(headerRow int) string {
	where := "no row names"
	if headerRow > 0 {
		where = "the row header_row names holds none of"
	}
	if len(cs.mapped) == 0 {
		return where + " the columns sample, group, observable and value (or d15n); name them in the header, or map the lab's names with columns: in the study"
	}
	var names []string
	for _, role := range requiredRoles {
		names = append(names, fmt.Sprintf("%q", cs.label(role)))
	}
	return fmt.Sprintf("%s the columns %s that columns: maps; check their spelling against the header", where, strings.Join(names, ", "))
}
