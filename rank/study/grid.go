package study

import (
	"fmt"
	"nlens/knowledge/input"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// grid is a samples table as it was read: the text of each non-blank row of
// a CSV file or of one sheet of a workbook, with the position a person would
// look up to find it.
type grid struct {
	file  string
	sheet string // the sheet's name for a workbook; "" for a CSV file
	rows  []gridRow
}

// gridRow is one row of a grid. For a CSV file pos is the 1-based line where
// the row starts; for a sheet it is the 1-based row number.
type gridRow struct {
	pos   int
	cells []string
}

// cell returns the text of column col (0-based) of row r, or "".
func (r gridRow) cell(col int) string {
	if col < 0 || col >= len(r.cells) {
		return ""
	}
	return r.cells[col]
}

// errAt returns a problem at column col (0-based; -1 for the whole row) of
// the row at pos: a *input.Error with the line for a CSV file, a
// *CellError with sheet and cell for a workbook.
func (g *grid) errAt(pos, col int, field, format string, args ...any) error {
	msg := fmt.Sprintf(format, args...)
	if g.sheet == "" {
		return &input.Error{File: g.file, Line: pos, Field: field, Msg: msg}
	}
	return &CellError{File: g.file, Sheet: g.sheet, Row: pos, Col: col, Field: field, Msg: msg}
}

// where names a row for a message that refers back to it: "line 3" or
// "row 3".
func (g *grid) where(pos int) string {
	if g.sheet == "" {
		return "line " + strconv.Itoa(pos)
	}
	return "row " + strconv.Itoa(pos)
}

// CellError is a problem in a spreadsheet: like input.Error, with
// the sheet and the cell (A1 style) in place of a line. Col is 0-based and
// -1 when the whole row is meant; Row is 1-based.
//
//	results.xlsx: δ15N!D17: value: expected a number, got "n.d."
//
// Unwrap returns the equivalent *input.Error (Line = Row), so
// errors.As and the exit codes treat a CellError as bad input.
type CellError struct {
	File, Sheet string
	Row, Col    int
	Field, Msg  string
}

func (e *CellError) Error() string {
	at := sheetRef(e.Sheet)
	switch {
	case e.Col >= 0:
		at += "!" + cellName(e.Col, e.Row)
	case e.Row > 0:
		at += " row " + strconv.Itoa(e.Row)
	}
	// Written as an InputError with no line whose file is "FILE: SHEET!CELL".
	return (&input.Error{File: e.File + ": " + at, Field: e.Field, Msg: e.Msg}).Error()
}

// Unwrap gives the problem as a input.Error positioned at the row.
func (e *CellError) Unwrap() error {
	return &input.Error{File: e.File, Line: e.Row, Field: e.Field, Msg: e.Msg}
}

// Cell returns the A1-style name of the cell, or "" for a whole row.
func (e *CellError) Cell() string {
	if e.Col < 0 {
		return ""
	}
	return cellName(e.Col, e.Row)
}

// cellName writes a 0-based column and a 1-based row as an A1 reference.
func cellName(col, row int) string {
	var letters []byte
	for c := col + 1; c > 0; c = (c - 1) / 26 {
		letters = append([]byte{byte('A' + (c-1)%26)}, letters...)
	}
	return string(letters) + strconv.Itoa(row)
}

// columnName is the letter name of a 0-based column ("D").
func columnName(col int) string {
	name := cellName(col, 1)
	return name[:len(name)-1]
}

// sheetRef writes a sheet name as a spreadsheet formula would: bare when it
// is letters, digits, '_' and '.', else in single quotes (a quote doubled).
// Control characters are escaped.
func sheetRef(name string) string {
	plain := name != ""
	for _, r := range name {
		if !(unicode.IsLetter(r) || unicode.IsDigit(r) || r == '_' || r == '.') {
			plain = false
			break
		}
	}
	if plain {
		return name
	}
	return "'" + escapeText(strings.ReplaceAll(name, "'", "''")) + "'"
}

// escapeText returns s unchanged when it is valid UTF-8 with no control
// characters, and otherwise with those characters (and invalid bytes)
// escaped as strconv.Quote does, without the quotes. Text from a user's file
// passes through it (or through %q) before it reaches a message, so a NUL
// byte or an escape sequence never reaches the terminal raw (issue 15).
func escapeText(s string) string {
	if utf8.ValidString(s) && strings.IndexFunc(s, unicode.IsControl) < 0 {
		return s
	}
	q := strconv.Quote(s)
	return q[1 : len(q)-1]
}

// problemList is a list of problems of which some are CellErrors (a list of
// InputErrors only is returned as input.Errors).
type problemList []error

func (l problemList) Error() string {
	parts := make([]string, len(l))
	for i, e := range l {
		parts[i] = e.Error()
	}
	return strings.Join(parts, "\n")
}

// Unwrap lets errors.As find the first problem, and input.Flatten all.
func (l problemList) Unwrap() []error { return l }

// maxProblems is how many problems a samples file reports before it stops:
// a file that is wrong throughout says so in a screenful, not a million
// lines.
const maxProblems = 50

// problems collects the problems of a samples file.
type problems struct {
	list    []error
	dropped int
}

func (p *problems) add(err error) {
	if len(p.list) < maxProblems {
		p.list = append(p.list, err)
		return
	}
	p.dropped++
}

func (p *problems) full() bool { return len(p.list) >= maxProblems }

// err returns nil, the one problem, input.Errors when every
// problem is an InputError, or a problemList.
func (p *problems) err() error {
	if len(p.list) == 0 {
		return nil
	}
	list := p.list
	if p.dropped > 0 {
		last := list[len(list)-1]
		var more error
		switch e := last.(type) {
		case *input.Error:
			more = &input.Error{File: e.File, Line: e.Line, Msg: fmt.Sprintf("%d more problems after this one are not shown", p.dropped)}
		case *CellError:
			more = &CellError{File: e.File, Sheet: e.Sheet, Row: e.Row, Col: -1, Msg: fmt.Sprintf("%d more problems after this one are not shown", p.dropped)}
		}
		if more != nil {
			list = append(list[:len(list):len(list)], more)
		}
	}
	if len(list) == 1 {
		return list[0]
	}
	ies := make(input.Errors, 0, len(list))
	for _, e := range list {
		ie, ok := e.(*input.Error)
		if !ok {
			return problemList(list)
		}
		ies = append(ies, ie)
	}
	return ies
}
