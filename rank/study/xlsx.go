package study

import (
	"bytes"
	"cmp"
	"errors"
	"fmt"
	"nlens/knowledge/input"
	"slices"
	"strings"

	"github.com/xuri/excelize/v2"
)

// maxUnzippedBytes bounds what a workbook may unpack to (its parts as the
// zip archive declares them; archive/zip refuses a part longer than
// declared). A samples workbook is a few hundred kB; the bound keeps a
// hostile archive from filling memory, and keeps every part in memory (no
// temporary files).
const maxUnzippedBytes = 256 << 20

// workbook is an open .xlsx file and the sheet the samples are on.
type workbook struct {
	f     *excelize.File
	sheet string
	// merged maps a cell filled from a merged range to that range.
	merged map[[2]int]*mergeRange
}

// mergeRange is a range of merged cells, 0-based and inclusive.
type mergeRange struct {
	r1, c1, r2, c2 int
	name           string // "B4:B9"
	value          string
}

// readWorkbook reads one sheet of an .xlsx workbook (the first visible one
// when sheet is "") into a table. Cells are read as stored: numbers in full
// precision whatever their display format, formulas as the result the
// spreadsheet program saved with them. A merged range gives its value to
// every cell it covers, so a treatment written once beside a block of rows
// applies to each row (said in a warning).
func readWorkbook(file string, data []byte, sheet string) (t *table, err error) {
	f, err := excelize.OpenReader(bytes.NewReader(data), excelize.Options{
		RawCellValue:      true,
		UnzipSizeLimit:    maxUnzippedBytes,
		UnzipXMLSizeLimit: maxUnzippedBytes,
	})
	if err != nil {
		msg := fmt.Sprintf("not a readable .xlsx workbook: %s", escapeText(err.Error()))
		if strings.Contains(err.Error(), "unzip size") {
			msg = fmt.Sprintf("the workbook unpacks to more than %d MiB, the most nlens reads", maxUnzippedBytes>>20)
		}
		return nil, &input.Error{File: file, Msg: msg}
	}
	defer f.Close()
	sheets := f.GetSheetList()
	if len(sheets) == 0 {
		return nil, &input.Error{File: file, Msg: "the workbook has no sheets"}
	}
	name, err := pickSheet(f, sheets, sheet)
	if err != nil {
		return nil, &input.Error{File: file, Msg: err.Error()}
	}
	rows, err := f.GetRows(name, excelize.Options{RawCellValue: true})
	if err != nil {
		return nil, &input.Error{File: file, Msg: fmt.Sprintf("sheet %s is unreadable: %s", sheetRef(name), escapeText(err.Error()))}
	}
	wb := &workbook{f: f, sheet: name, merged: map[[2]int]*mergeRange{}}
	t = &table{grid: &grid{file: file, sheet: name}, book: wb}
	if err := wb.fillMerged(t, rows); err != nil {
		return nil, err
	}
	for i, cells := range rows {
		blank := true
		for j, c := range cells {
			c = strings.TrimSpace(c)
			cells[j] = c
			blank = blank && c == ""
		}
		if !blank {
			t.grid.rows = append(t.grid.rows, gridRow{pos: i + 1, cells: cells})
		}
	}
	if len(t.grid.rows) == 0 {
		return nil, &CellError{File: file, Sheet: name, Row: 1, Col: -1, Msg: "the sheet is empty; expected a header row with sample, group, observable and value"}
	}
	return t, nil
}

// pickSheet finds the sheet to read: the named one (names compare without
// case, as the spreadsheet programs do), or the first visible sheet.
func pickSheet(f *excelize.File, sheets []string, want string) (string, error) {
	if want == "" {
		for _, s := range sheets {
			if v, err := f.GetSheetVisible(s); err == nil && v {
				return s, nil
			}
		}
		return sheets[0], nil
	}
	for _, s := range sheets {
		if strings.EqualFold(s, want) {
			return s, nil
		}
	}
	quoted := make([]string, len(sheets))
	for i, s := range sheets {
		quoted[i] = fmt.Sprintf("%q", s)
	}
	return "", fmt.Errorf("the workbook has no sheet %q (sheets: %s)", want, strings.Join(quoted, ", "))
}

// fillMerged copies the value of each merged range into every cell it
// covers, within the cells the sheet holds (a range reaching beyond the last
// row or column with content is cut there).
func (wb *workbook) fillMerged(t *table, rows [][]string) error {
	merges, err := wb.f.GetMergeCells(wb.sheet)
	if err != nil {
		return &input.Error{File: t.grid.file, Msg: fmt.Sprintf("the merged cells of sheet %s are unreadable: %s", sheetRef(wb.sheet), escapeText(err.Error()))}
	}
	width := 0
	for _, r := range rows {
		width = max(width, len(r))
	}
	budget := len(rows) * width // a cell is filled once in a valid sheet
	for _, m := range merges {
		c1, r1, err1 := excelize.CellNameToCoordinates(m.GetStartAxis())
		c2, r2, err2 := excelize.CellNameToCoordinates(m.GetEndAxis())
		if err := errors.Join(err1, err2); err != nil {
			return &input.Error{File: t.grid.file, Msg: fmt.Sprintf("sheet %s has an unreadable merged range %q", sheetRef(wb.sheet), m.GetStartAxis()+":"+m.GetEndAxis())}
		}
		mr := &mergeRange{r1: min(r1, r2) - 1, c1: min(c1, c2) - 1, r2: max(r1, r2) - 1, c2: max(c1, c2) - 1}
		mr.name = cellName(mr.c1, mr.r1+1) + ":" + cellName(mr.c2, mr.r2+1)
		if mr.r1 >= len(rows) {
			continue
		}
		mr.value = rowCell(rows[mr.r1], mr.c1)
		for r := mr.r1; r <= min(mr.r2, len(rows)-1); r++ {
			for c := mr.c1; c <= min(mr.c2, width-1); c++ {
				if r == mr.r1 && c == mr.c1 {
					continue
				}
				if budget--; budget < 0 {
					return &input.Error{File: t.grid.file, Msg: fmt.Sprintf("sheet %s has overlapping merged ranges", sheetRef(wb.sheet))}
				}
				for len(rows[r]) <= c {
					rows[r] = append(rows[r], "")
				}
				rows[r][c] = mr.value
				wb.merged[[2]int{r, c}] = mr
			}
		}
	}
	return nil
}

func rowCell(r []string, c int) string {
	if c < len(r) {
		return r[c]
	}
	return ""
}

// mergedAt returns the merged range that filled the cell at 1-based row pos
// and 0-based column col, or nil.
func (wb *workbook) mergedAt(pos, col int) *mergeRange {
	if wb == nil {
		return nil
	}
	return wb.merged[[2]int{pos - 1, col}]
}

// formulaWithoutResult reports whether the cell holds a formula but no
// saved result (a file written by a program that does not calculate).
func (wb *workbook) formulaWithoutResult(pos, col int) bool {
	if wb == nil {
		return false
	}
	formula, err := wb.f.GetCellFormula(wb.sheet, cellName(col, pos))
	return err == nil && formula != ""
}

// notNumber reports whether the cell is stored as a truth value or an
// error value, which read as text such as "1" or "#N/A" but are not
// measurements.
func (wb *workbook) notNumber(pos, col int) (string, bool) {
	if wb == nil {
		return "", false
	}
	ty, err := wb.f.GetCellType(wb.sheet, cellName(col, pos))
	if err != nil {
		return "", false
	}
	switch ty {
	case excelize.CellTypeBool:
		return "a TRUE/FALSE cell", true
	case excelize.CellTypeError:
		return "an error value", true
	}
	return "", false
}

// mergeWarnings says how merged cells were read: header cells merged
// across columns name their first column; a header merged down over rows
// makes those rows part of the header; merged data cells give their value
// to each row.
func (wb *workbook) mergeWarnings(t *table) []string {
	if wb == nil || len(wb.merged) == 0 {
		return nil
	}
	seen := map[*mergeRange]bool{}
	var ranges []*mergeRange
	for _, r := range t.grid.rows {
		for c := range r.cells {
			if m := wb.merged[[2]int{r.pos - 1, c}]; m != nil && !seen[m] {
				seen[m] = true
				ranges = append(ranges, m)
			}
		}
	}
	slices.SortFunc(ranges, func(a, b *mergeRange) int {
		return cmp.Or(cmp.Compare(a.r1, b.r1), cmp.Compare(a.c1, b.c1))
	})
	head := t.grid.rows[t.head].pos - 1
	var warns, down, data []string
	end := head
	for _, m := range ranges {
		switch {
		case m.r1 == head:
			if m.c2 > m.c1 {
				warns = append(warns, fmt.Sprintf("%s: %s!%s: header cells are merged; %q names column %s only", t.grid.file, sheetRef(wb.sheet), m.name, m.value, columnName(m.c1)))
			}
			if m.r2 > m.r1 {
				down = append(down, m.name)
				end = max(end, m.r2)
			}
		case m.r1 > head:
			data = append(data, m.name)
		}
	}
	if len(down) > 0 {
		warns = append(warns, fmt.Sprintf("%s: sheet %s: header cells %s are merged down, so rows %d–%d are read as the header", t.grid.file, sheetRef(wb.sheet), shortList(down), head+1, end+1))
	}
	if len(data) > 0 {
		warns = append(warns, fmt.Sprintf("%s: sheet %s: merged cells %s give their value to every row they cover", t.grid.file, sheetRef(wb.sheet), shortList(data)))
	}
	return warns
}

// shortList joins at most four items and counts the rest.
func shortList(items []string) string {
	list := strings.Join(items[:min(len(items), 4)], ", ")
	if len(items) > 4 {
		list += fmt.Sprintf(" and %d more", len(items)-4)
	}
	return list
}

// headerEnd is the last 1-based row of the header: the header row, or
// further down when a header cell is merged down over more rows.
func (wb *workbook) headerEnd(headPos int) int {
	end := headPos
	if wb == nil {
		return end
	}
	for _, m := range wb.merged {
		if m.r1 == headPos-1 {
			end = max(end, m.r2+1)
		}
	}
	return end
}
