package study

import (
	"errors"
	"nlens/knowledge/input"
	"strings"
	"testing"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank/study/sampletest"
)

// Fuzzing the spreadsheet reader (issue 14). Run each for a minute with
//
//	go test ./rank/study -run '^$' -fuzz '^FuzzParseSpreadsheet$' -fuzztime 60s -fuzzminimizetime 5s
//	go test ./rank/study -run '^$' -fuzz '^FuzzSpreadsheetCells$' -fuzztime 60s -fuzzminimizetime 5s
//
// FuzzParseSpreadsheet mutates the bytes of small workbooks generated here
// with excelize (the seed corpus; inputs that once failed are kept in
// testdata/fuzz/FuzzParseSpreadsheet/). Most mutations break the zip
// archive, so FuzzSpreadsheetCells fuzzes what a valid workbook holds
// instead: cell texts, merged ranges and the header row, written into a
// workbook for each input.
//
// The property, for every input:
//
//   - the reader never panics, and no panic is turned into an "internal
//     error" message on the way (input.Recover);
//   - a rejection is an input error: errors.As finds a
//     *input.Error; every problem names the workbook and says
//     what is wrong; a CellError names a sheet and a row ≥ 1;
//   - no message holds a control character (issue 15);
//   - an accepted workbook gives finite statistics of n ≥ 2 per group.

const fuzzXLSXFile = "fuzz.xlsx"

// fuzzSites are the sites rows are checked against: none (the study's site
// failed), a template with a fungi pool and one without.
func fuzzSites(f *testing.F) []*forward.Site {
	sites := []*forward.Site{nil}
	for _, id := range []string{"temperate-deciduous-forest", "fertilized-cropland"} {
		s, err := forward.LoadSite(id, knowledge.MustDefault())
		if err != nil {
			f.Fatal(err)
		}
		sites = append(sites, s)
	}
	return sites
}

// spreadsheetSeeds are small workbooks (invented content): the lab table,
// the lab's sheet with merges and a formula, bad cells, an empty sheet,
// two sheets, a header far down.
func spreadsheetSeeds(f *testing.F) [][]byte {
	bad := labSheet()
	bad.Rows[4][3] = "n.d."
	bad.Rows[5][3] = "=AVERAGE(D4:D5)|"
	bad.Rows[6][3] = "TRUE"
	return [][]byte{
		sampletest.Workbook(f, sampletest.Sheet{Name: "δ15N", Rows: labRows}),
		sampletest.Workbook(f, labSheet()),
		sampletest.Workbook(f, bad),
		sampletest.Workbook(f, sampletest.Sheet{Name: "Empty"}),
		sampletest.Workbook(f, sampletest.Sheet{Name: "Notes", Rows: [][]string{{"x"}}}, sampletest.Sheet{Name: "Data", Rows: labRows}),
		sampletest.Workbook(f, sampletest.Sheet{Name: "Low", TopRow: 30, Rows: labRows, Merge: []string{"A30:A31", "B31:B33"}, Extra: [][2]string{{"Z99", ""}}}),
	}
}

func FuzzParseSpreadsheet(f *testing.F) {
	for i, seed := range spreadsheetSeeds(f) {
		f.Add(seed, i%2 == 0, byte(i))
	}
	sites := fuzzSites(f)
	f.Fuzz(func(t *testing.T, data []byte, allowEnriched bool, siteChoice byte) {
		site := sites[int(siteChoice)%len(sites)]
		s, err := ReadSamples(fuzzXLSXFile, data, &SamplesSpec{File: fuzzXLSXFile}, site, Options{AllowEnriched: allowEnriched})
		checkSamplesOutcome(t, s, err, fuzzXLSXFile)
	})
}

func FuzzSpreadsheetCells(f *testing.F) {
	join := func(rows [][]string) string {
		lines := make([]string, len(rows))
		for i, r := range rows {
			lines[i] = strings.Join(r, "\t")
		}
		return strings.Join(lines, "\n")
	}
	lab := labSheet()
	f.Add(join(labRows), "", byte(0), false, byte(1))
	f.Add(join(lab.Rows), strings.Join(lab.Merge, " "), byte(0x80), false, byte(1))
	f.Add(join(lab.Rows), "D3:E3 A3:A4", byte(0x83), true, byte(2))
	f.Add("sample\tgroup\tobservable\tvalue\tunit\tdepth_cm\tblock\ns1\ta\tsoil\t0.3665\tatom%\t-5\t1\ns2\ta\tsoil\t0.3670\tatom %\t0-10\t2\n", "B2:B3", byte(0), false, byte(1))
	f.Add("sample\tgroup\tobservable\tvalue\ns1\ta\tfoliage\t1e308\ns2\ta\tfoliage\t-1e308\n", "A1:D3", byte(1), true, byte(0))
	sites := fuzzSites(f)
	f.Fuzz(func(t *testing.T, cells, merges string, header byte, allowEnriched bool, siteChoice byte) {
		var rows [][]string
		for i, line := range strings.Split(cells, "\n") {
			if i == 40 {
				break
			}
			row := strings.Split(line, "\t")
			if len(row) > 12 {
				row = row[:12]
			}
			for j := range row {
				if len(row[j]) > 64 {
					row[j] = row[j][:64]
				}
			}
			rows = append(rows, row)
		}
		var ranges []string
		for i, m := range strings.Fields(merges) {
			if i == 8 {
				break
			}
			ranges = append(ranges, m)
		}
		data, err := sampletest.WorkbookBytes(sampletest.Sheet{Name: "Fuzz", Rows: rows, Merge: ranges})
		if err != nil {
			return // excelize refused to write these cells; nothing to read
		}
		spec := &SamplesSpec{File: fuzzXLSXFile, HeaderRow: int(header & 0x07)}
		if header&0x80 != 0 { // the long form, lenient about other columns
			spec.Columns = map[string]string{"sample": "Sample ID", "group": "Treatment", "observable": "Material", "value": "d15N (permil)"}
			spec.Values = map[string]map[string]string{"observable": {"leaf": "foliage", "soil 0-10": "soil"}}
		}
		site := sites[int(siteChoice)%len(sites)]
		s, err := ReadSamples(fuzzXLSXFile, data, spec, site, Options{AllowEnriched: allowEnriched})
		checkSamplesOutcome(t, s, err, fuzzXLSXFile)
	})
}

// checkSamplesOutcome holds a samples file's outcome to the property at the
// top of this file.
func checkSamplesOutcome(t *testing.T, s *Samples, err error, file string) {
	t.Helper()
	if err != nil {
		if s != nil {
			t.Errorf("ReadSamples returned samples and an error: %v", err)
		}
		checkMessageClean(t, err)
		var ie *input.Error
		if !errors.As(err, &ie) {
			t.Fatalf("rejection is not an input error: %T %v", err, err)
		}
		for _, e := range input.Flatten(err) {
			if e.File != file || e.Msg == "" {
				t.Errorf("problem names %q or says nothing: %#v", e.File, e)
			}
		}
		var ce *CellError
		if errors.As(err, &ce) && (ce.Sheet == "" || ce.Row < 1) {
			t.Errorf("cell error without sheet or row: %#v", ce)
		}
		return
	}
	for _, g := range s.Groups {
		if !finite(g.Mean) || !finite(g.SD) || g.SD < 0 || g.N < 2 || g.Line < 1 || len(g.Samples) != g.N {
			t.Errorf("accepted group %+v", g)
		}
	}
	checkTextClean(t, s.Source.String())
	for _, w := range s.Warnings {
		checkTextClean(t, w)
	}
}

// checkMessageClean fails on a rejection that hides a panic or holds a
// control character.
func checkMessageClean(t *testing.T, err error) {
	t.Helper()
	if strings.Contains(err.Error(), "(internal error:") {
		t.Errorf("a panic was turned into an error: %v", err)
	}
	checkTextClean(t, err.Error())
}

func checkTextClean(t *testing.T, text string) {
	t.Helper()
	if strings.ContainsFunc(text, isControl) {
		t.Errorf("text holds a control character: %q", text)
	}
}
