package study

import (
	"errors"
	"nlens/knowledge/input"
	"slices"
	"strings"
	"testing"

	"nlens/rank/study/sampletest"
)

// The same table in a workbook gives the same statistics as in CSV, and the
// source names the sheet and the rows read.
func TestWorkbookSameAsCSV(t *testing.T) {
	t.Parallel()
	data := sampletest.Workbook(t, sampletest.Sheet{Name: "δ15N", Rows: labRows})
	s, err := ReadSamples("results.xlsx", data, &SamplesSpec{File: "results.xlsx"}, testSite(t), Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkLabStats(t, s.Groups)
	want := "results.xlsx: workbook, sheet δ15N; header on row 1, 9 data rows (to row 10)"
	if got := s.Source.String(); got != want {
		t.Errorf("source: got %q, want %q", got, want)
	}
	if len(s.Warnings) > 0 {
		t.Errorf("unexpected warnings %q", s.Warnings)
	}
}

// labSheet is labRows laid out as a lab's sheet (invented): a title block
// merged across the top, the header on row 3 with the lab's own names, the
// treatment written once beside each block of rows (merged down), a formula
// for one value, a column the study does not use, and a styled empty cell
// far below and to the right of the table.
func labSheet() sampletest.Sheet {
	return sampletest.Sheet{
		Name: "δ15N",
		Rows: [][]string{
			{"Isotope results, batch 7 (invented)"},
			{},
			{"Sample ID", "Treatment", "Material", "d15N (permil)", "%N"},
			{"c1", "control", "Leaf", "-1.5", "2.1"},
			{"c2", "", "Leaf", "-0.5", "2.0"},
			{"c3", "", "Leaf", "=AVERAGE(D4:D5)|-1", "2.2"},
			{"t1", "fert", "Leaf", "1.25", "2.6"},
			{"t2", "", "Leaf", "0.75", "2.5"},
			{"c1", "control", "Soil 0-10", "3.5", "0.3"},
			{"c2", "", "Soil 0-10", "4.5", "0.3"},
			{"t1", "fert", "Soil 0-10", "4.25", "0.4"},
			{"t2", "", "Soil 0-10", "4.75", "0.4"},
		},
		Merge: []string{"A1:E1", "B4:B6", "B7:B8", "B9:B10", "B11:B12"},
		Extra: [][2]string{{"H40", ""}},
	}
}

// labSpec maps labSheet's names to nlens's.
func labSpec() *SamplesSpec {
	return &SamplesSpec{
		File:    "results.xlsx",
		Columns: map[string]string{"sample": "Sample ID", "group": "Treatment", "observable": "Material", "value": "d15N (permil)"},
		Values:  map[string]map[string]string{"observable": {"leaf": "foliage", "soil 0-10": "soil"}},
	}
}

// A lab's sheet is read unchanged with a columns and values mapping: the
// title block is skipped, merged cells fill their rows (said in a
// warning), the formula gives its saved result, the column not used is
// listed, and the styled empty cell beyond the table changes nothing.
func TestWorkbookAsALabSendsIt(t *testing.T) {
	t.Parallel()
	data := sampletest.Workbook(t, labSheet())
	s, err := ReadSamples("results.xlsx", data, labSpec(), testSite(t), Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkLabStats(t, s.Groups)
	want := `results.xlsx: workbook, sheet δ15N; header on row 3, 9 data rows (to row 12); columns not used: "%N"`
	if got := s.Source.String(); got != want {
		t.Errorf("source:\n got %q\nwant %q", got, want)
	}
	wantWarn := []string{"results.xlsx: sheet δ15N: merged cells B4:B6, B7:B8, B9:B10, B11:B12 give their value to every row they cover"}
	if !slices.Equal(s.Warnings, wantWarn) {
		t.Errorf("warnings:\n got %q\nwant %q", s.Warnings, wantWarn)
	}
}

// Header cells merged across two columns name the first; a header cell
// merged down makes the rows below it part of the header.
func TestWorkbookMergedHeader(t *testing.T) {
	t.Parallel()
	sheet := sampletest.Sheet{
		Name: "Data",
		Rows: [][]string{
			{"sample", "group", "observable", "value", "", "note"},
			{"", "", "", "", "", ""},
			{"s1", "a", "soil", "1", "", ""},
			{"s2", "a", "soil", "2", "", ""},
		},
		Merge: []string{"D1:E1", "A1:A2", "F1:F2"},
	}
	s, err := ReadSamples("m.xlsx", sampletest.Workbook(t, sheet), &SamplesSpec{File: "m.xlsx"}, testSite(t), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Groups) != 1 || s.Groups[0].N != 2 || s.Groups[0].Mean != 1.5 {
		t.Errorf("got %+v, want one group of soil, n = 2, mean 1.5 (hand computation)", s.Groups)
	}
	want := []string{
		`m.xlsx: Data!D1:E1: header cells are merged; "value" names column D only`,
		"m.xlsx: sheet Data: header cells A1:A2, F1:F2 are merged down, so rows 1–2 are read as the header",
	}
	if !slices.Equal(s.Warnings, want) {
		t.Errorf("warnings:\n got %q\nwant %q", s.Warnings, want)
	}
}

// Bad cells are reported with sheet and cell (DESIGN §6).
func TestWorkbookBadCells(t *testing.T) {
	t.Parallel()
	site := testSite(t)
	edit := func(row, col int, text string) func() sampletest.Sheet {
		return func() sampletest.Sheet {
			s := labSheet()
			s.Rows[row-1][col] = text
			return s
		}
	}
	tests := []struct {
		name  string
		sheet func() sampletest.Sheet
		spec  func(*SamplesSpec)
		want  string
	}{
		{"text for a number", edit(11, 3, "n.d."), nil, `results.xlsx: δ15N!D11: value: expected a number, got "n.d."`},
		{"a truth value", edit(11, 3, "TRUE"), nil, `results.xlsx: δ15N!D11: value: expected a number, got a TRUE/FALSE cell ("1")`},
		{"formula without a saved result", edit(6, 3, "=AVERAGE(D4:D5)|"), nil, "results.xlsx: δ15N!D6: value: the cell holds a formula but no saved result; open the workbook in a spreadsheet program and save it again"},
		{"unknown material", edit(7, 2, "Stem"), nil, `results.xlsx: δ15N!C7: observable: unknown observable "Stem" (use foliage, roots, litter, soil, soil-ammonium, soil-nitrate, leachate-nitrate, fungi, n2o, n2o-sp, nitrate-d18o, ecosystem, pool:<pool>, flux:<process>)`},
		{"missing sample id", edit(12, 0, ""), nil, "results.xlsx: δ15N!A12: sample: missing sample id"},
		{"duplicate sample", edit(12, 0, "t1"), nil, `results.xlsx: δ15N!A12: sample: sample "t1" already has a value of soil on row 11`},
		{"misspelt header", nil, func(s *SamplesSpec) { s.Columns["group"] = "Treatmnet" },
			`results.xlsx: δ15N row 3: Treatmnet: missing column "Treatmnet", which columns.group names (the header is the first row holding every mapped column; check the spelling or give header_row)`},
		{"no such sheet", nil, func(s *SamplesSpec) { s.Sheet = "d15N" }, `results.xlsx: the workbook has no sheet "d15N" (sheets: "δ15N")`},
		{"header_row on an empty row", nil, func(s *SamplesSpec) { s.HeaderRow = 2 }, "results.xlsx:1: header_row: row 2 of sheet δ15N is empty; the header must be there"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			sheet := labSheet()
			if tt.sheet != nil {
				sheet = tt.sheet()
			}
			spec := labSpec()
			if tt.spec != nil {
				tt.spec(spec)
			}
			_, err := ReadSamples("results.xlsx", sampletest.Workbook(t, sheet), spec, site, Options{})
			if err == nil {
				t.Fatalf("no error; want %q", tt.want)
			}
			if err.Error() != tt.want {
				t.Errorf("got  %q\nwant %q", err.Error(), tt.want)
			}
			var ie *input.Error
			if !errors.As(err, &ie) {
				t.Errorf("%T is not an input error to errors.As", err)
			}
		})
	}
}

// A named sheet is read; the first visible one otherwise.
func TestWorkbookSheets(t *testing.T) {
	t.Parallel()
	notes := sampletest.Sheet{Name: "Notes", Rows: [][]string{{"made up for a test"}}}
	data := sampletest.Workbook(t, notes, sampletest.Sheet{Name: "Run 2", Rows: labRows})
	s, err := ReadSamples("r.xlsx", data, &SamplesSpec{File: "r.xlsx", Sheet: "run 2"}, testSite(t), Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkLabStats(t, s.Groups)
	if s.Source.Sheet != "Run 2" || !strings.Contains(s.Source.String(), "sheet 'Run 2'") {
		t.Errorf("source %q, want sheet 'Run 2'", s.Source.String())
	}
	_, err = ReadSamples("r.xlsx", data, &SamplesSpec{File: "r.xlsx"}, testSite(t), Options{})
	want := "r.xlsx: Notes row 1: no row names the columns sample, group, observable and value (or d15n); name them in the header, or map the lab's names with columns: in the study"
	if err == nil || err.Error() != want {
		t.Errorf("first sheet:\n got %v\nwant %s", err, want)
	}
}

// Files that are not .xlsx workbooks are named for what they are.
func TestWorkbookFormats(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name, file string
		data       []byte
		want       string
	}{
		{"old .xls", "r.xls", []byte{0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1}, "r.xls: an Excel 97–2003 workbook (.xls) or a password-protected workbook cannot be read; save it as .xlsx (without a password) or CSV"},
		{"OpenDocument", "r.ods", []byte("PK\x03\x04"), "r.ods: an OpenDocument spreadsheet (.ods) cannot be read; save it as .xlsx or CSV"},
		{"text named .xlsx", "r.xlsx", []byte("sample,group\n"), "r.xlsx: not an .xlsx workbook: the file is not a zip archive"},
		{"broken zip", "r.xlsx", []byte("PK\x03\x04 not really"), "r.xlsx: not a readable .xlsx workbook: zip: not a valid zip file"},
		{"sheet for a CSV", "r.csv", []byte("sample,group,observable,value\n"), `r.csv:1: sheet "x" is given, but this is a CSV file, which has no sheets`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			spec := &SamplesSpec{File: tt.file}
			if tt.name == "sheet for a CSV" {
				spec.Sheet = "x"
			}
			_, err := ReadSamples(tt.file, tt.data, spec, nil, Options{})
			if err == nil || err.Error() != tt.want {
				t.Errorf("got  %v\nwant %s", err, tt.want)
			}
		})
	}
}

// A workbook read through a CSV file's name is still a workbook: the bytes
// decide, not the name.
func TestWorkbookNamedCSV(t *testing.T) {
	t.Parallel()
	data := sampletest.Workbook(t, sampletest.Sheet{Name: "S", Rows: labRows})
	s, err := ReadSamples("export.csv", data, &SamplesSpec{File: "export.csv"}, testSite(t), Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkLabStats(t, s.Groups)
}

// CellError is written as a spreadsheet formula names a cell, quoting sheet
// names that need it.
func TestCellErrorText(t *testing.T) {
	t.Parallel()
	tests := []struct {
		e    CellError
		want string
	}{
		{CellError{File: "r.xlsx", Sheet: "δ15N", Row: 17, Col: 3, Field: "value", Msg: "m"}, "r.xlsx: δ15N!D17: value: m"},
		{CellError{File: "r.xlsx", Sheet: "Run 2", Row: 1, Col: 26, Msg: "m"}, "r.xlsx: 'Run 2'!AA1: m"},
		{CellError{File: "r.xlsx", Sheet: "it's", Row: 9, Col: -1, Msg: "m"}, "r.xlsx: 'it''s' row 9: m"},
		{CellError{File: "r.xlsx", Sheet: "a\x1bb", Row: 2, Col: 701, Msg: "m"}, `r.xlsx: 'a\x1bb'!ZZ2: m`},
	}
	for _, tt := range tests {
		if got := tt.e.Error(); got != tt.want {
			t.Errorf("got %q, want %q", got, tt.want)
		}
	}
}

// Numbers stored as text with a decimal comma, as some instrument software
// writes them into a sheet, are read as numbers and said in a warning.
func TestWorkbookTextDecimalComma(t *testing.T) {
	t.Parallel()
	rows := make([][]string, len(labRows))
	for i, r := range labRows {
		rows[i] = slices.Clone(r)
		if i > 0 {
			rows[i][3] = strings.Replace(r[3], ".", ",", 1) // stored as text
		}
	}
	s, err := ReadSamples("r.xlsx", sampletest.Workbook(t, sampletest.Sheet{Name: "S", Rows: rows}), &SamplesSpec{File: "r.xlsx"}, testSite(t), Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkLabStats(t, s.Groups)
	want := []string{`r.xlsx: S!D2: numbers stored as text with a decimal comma (first "-1,5") are read as numbers`}
	if !slices.Equal(s.Warnings, want) {
		t.Errorf("warnings:\n got %q\nwant %q", s.Warnings, want)
	}
}
