// Package sampletest writes one table of samples in the file formats a lab
// sends: CSV in its dialects (separator, decimal mark, encoding, quoted
// header) and .xlsx workbooks. It is test support for the samples reader
// and the command line (like net/http/httptest) and computes nothing for
// users.
package sampletest

import (
	"bytes"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
	"golang.org/x/text/encoding/unicode"
)

// Encoding is the text encoding of a generated CSV file.
type Encoding int

// Encodings of generated CSV text.
const (
	UTF8 Encoding = iota
	UTF8BOM
	UTF16LE // with byte-order mark
	UTF16BE // with byte-order mark
)

// CSVOptions is the dialect of a generated CSV file.
type CSVOptions struct {
	Separator    rune // ',' when 0
	DecimalComma bool // write numbers 1,5
	Encoding     Encoding
	QuoteHeader  bool   // put every header cell in double quotes
	LineEnd      string // "\n" when ""
}

var reDecimal = regexp.MustCompile(`^-?[0-9]+\.[0-9]+$`)

// CSV writes rows in the dialect o. A cell is quoted when it holds the
// separator, a quote or a line break (RFC 4180), and header cells also when
// o.QuoteHeader is set.
func CSV(rows [][]string, o CSVOptions) []byte {
	sep := o.Separator
	if sep == 0 {
		sep = ','
	}
	end := o.LineEnd
	if end == "" {
		end = "\n"
	}
	var b strings.Builder
	for i, row := range rows {
		for j, cell := range row {
			if j > 0 {
				b.WriteRune(sep)
			}
			if o.DecimalComma && reDecimal.MatchString(cell) {
				cell = strings.Replace(cell, ".", ",", 1)
			}
			if (i == 0 && o.QuoteHeader) || strings.ContainsAny(cell, string(sep)+"\"\r\n") {
				cell = `"` + strings.ReplaceAll(cell, `"`, `""`) + `"`
			}
			b.WriteString(cell)
		}
		b.WriteString(end)
	}
	text := []byte(b.String())
	switch o.Encoding {
	case UTF8BOM:
		return append([]byte{0xEF, 0xBB, 0xBF}, text...)
	case UTF16LE, UTF16BE:
		order := unicode.LittleEndian
		if o.Encoding == UTF16BE {
			order = unicode.BigEndian
		}
		out, err := unicode.UTF16(order, unicode.UseBOM).NewEncoder().Bytes(text)
		if err != nil {
			panic(err) // valid UTF-8 always encodes
		}
		return out
	}
	return text
}

// Sheet is one sheet of a generated workbook.
type Sheet struct {
	Name string
	// TopRow is the 1-based row of Rows[0] (1 when 0), so a table can
	// start below a title block.
	TopRow int
	// Rows are the cells; a cell that reads as a decimal number is stored
	// as a number, anything else as text. A cell "=FORMULA|VALUE" is stored
	// as the formula with VALUE as its saved result, "=FORMULA|" as a
	// formula with no saved result.
	Rows [][]string
	// Merge lists ranges to merge, such as "B4:B6".
	Merge []string
	// Extra are cells set beyond the table, such as a styled but empty
	// cell far below it ({"F40", ""}).
	Extra [][2]string
}

var reNumber = regexp.MustCompile(`^-?[0-9]+(\.[0-9]+)?([eE][+-]?[0-9]+)?$`)

// Workbook writes the sheets to an .xlsx workbook, in order; a failure
// ends the test.
func Workbook(t testing.TB, sheets ...Sheet) []byte {
	t.Helper()
	data, err := WorkbookBytes(sheets...)
	if err != nil {
		t.Fatal(err)
	}
	return data
}

// WorkbookBytes writes the sheets to an .xlsx workbook, in order.
func WorkbookBytes(sheets ...Sheet) (_ []byte, err error) {
	f := excelize.NewFile()
	defer f.Close()
	// must records the first error; later calls do nothing.
	must := func(e error) bool {
		if err == nil {
			err = e
		}
		return err == nil
	}
	for i, s := range sheets {
		if i == 0 {
			must(f.SetSheetName("Sheet1", s.Name))
		} else {
			_, e := f.NewSheet(s.Name)
			must(e)
		}
		top := max(s.TopRow, 1)
		for r, row := range s.Rows {
			for c, cell := range row {
				name, e := excelize.CoordinatesToCellName(c+1, top+r)
				if !must(e) {
					return nil, err
				}
				if formula, ok := strings.CutPrefix(cell, "="); ok {
					expr, saved, _ := strings.Cut(formula, "|")
					if saved != "" {
						must(setCell(f, s.Name, name, saved))
					}
					must(f.SetCellFormula(s.Name, name, expr))
					continue
				}
				if cell != "" {
					must(setCell(f, s.Name, name, cell))
				}
			}
		}
		for _, m := range s.Merge {
			a, b, _ := strings.Cut(m, ":")
			must(f.MergeCell(s.Name, a, b))
		}
		if len(s.Extra) > 0 {
			style, e := f.NewStyle(&excelize.Style{NumFmt: 2})
			must(e)
			for _, x := range s.Extra {
				must(f.SetCellStyle(s.Name, x[0], x[0], style))
				if x[1] != "" {
					must(setCell(f, s.Name, x[0], x[1]))
				}
			}
		}
	}
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if _, err := f.WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

func setCell(f *excelize.File, sheet, cell, text string) error {
	if reNumber.MatchString(text) {
		v, err := strconv.ParseFloat(text, 64)
		if err == nil {
			return f.SetCellValue(sheet, cell, v)
		}
	}
	if text == "TRUE" || text == "FALSE" {
		return f.SetCellBool(sheet, cell, text == "TRUE")
	}
	return f.SetCellStr(sheet, cell, text)
}
