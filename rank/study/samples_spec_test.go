package study

import (
	"math"
	"slices"
	"strings"
	"testing"

	"nlens/rank/study/sampletest"
)

// labCSV is a lab's export as it arrives (invented): a title block, the
// lab's own column names, semicolons with decimal commas, a reference
// material run between the samples, treatments written as the lab writes
// them, and a column nlens does not use.
const labCSV = "Isotope lab export (invented);;;;\n" +
	"Run 2026-11-03;;;;\n" +
	"\n" +
	"Sample ID;Treatment;Material;d15N (permil);Weight (mg)\n" +
	"c1;Ctrl;Leaf;-1,5;2,01\n" +
	"c2;Ctrl;Leaf;-0,5;1,98\n" +
	"c3;Ctrl;Leaf;-1,0;2,10\n" +
	"ref1;-;IAEA-N-1;0,43;0,20\n" +
	"t1;N+;Leaf;1,25;2,00\n" +
	"t2;N+;Leaf;0,75;2,03\n" +
	"c1;Ctrl;Soil 0-10;3,5;30,1\n" +
	"c2;Ctrl;Soil 0-10;4,5;29,7\n" +
	"t1;N+;Soil 0-10;4,25;30,4\n" +
	"t2;N+;Soil 0-10;4,75;30,0\n"

// labStudy reads labCSV with the long form of samples.
const labStudy = `site: {template: temperate-deciduous-forest}
comparisons:
  - {name: N+ vs control, control: control, treatment: fert, years: 2}
samples:
  file: lab.csv
  columns: {sample: "Sample ID", group: Treatment, observable: Material, value: "d15N (permil)"}
  values:
    observable: {Leaf: foliage, "Soil 0-10": soil, IAEA-N-1: ignore}
    group: {Ctrl: control, "N+": fert, "-": reference}
  unit: permil
`

// A lab's file is used unchanged with a columns and values mapping: the
// shifts are those of labRows (foliage +2.0 ‰, soil +0.5 ‰, by hand from
// the means in labRows' comment).
func TestLongFormLabFile(t *testing.T) {
	t.Parallel()
	st, err := parse(t, labStudy, map[string]string{"lab.csv": labCSV}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	obs := st.Comparisons[0].Observed
	if len(obs) != 2 || obs[0].Observable != "foliage" || math.Abs(obs[0].Shift-2.0) > 1e-12 || obs[1].Observable != "soil" || math.Abs(obs[1].Shift-0.5) > 1e-12 {
		t.Errorf("observed: got %+v", obs)
	}
	want := `lab.csv: CSV, semicolon-separated, decimal comma, UTF-8; header on line 4, 9 data rows (to line 14); 1 row left out as values maps them to ignore; columns not used: "Weight (mg)"`
	if st.Samples == nil || st.Samples.String() != want {
		t.Errorf("samples source:\n got %v\nwant %s", st.Samples, want)
	}
	if len(st.Warnings) > 0 {
		t.Errorf("unexpected warnings %q", st.Warnings)
	}
}

// The same lab file as a workbook, with header_row given.
func TestLongFormWorkbookHeaderRow(t *testing.T) {
	t.Parallel()
	var rows [][]string
	for _, line := range strings.Split(strings.TrimSuffix(labCSV, "\n"), "\n") {
		cells := strings.Split(strings.ReplaceAll(line, ",", "."), ";")
		rows = append(rows, cells)
	}
	book := string(sampletest.Workbook(t, sampletest.Sheet{Name: "Run 7", Rows: rows}))
	text := strings.NewReplacer("file: lab.csv", "file: lab.xlsx\n  sheet: Run 7\n  header_row: 4").Replace(labStudy)
	st, err := parse(t, text, map[string]string{"lab.xlsx": book}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if obs := st.Comparisons[0].Observed; len(obs) != 2 || math.Abs(obs[0].Shift-2.0) > 1e-12 {
		t.Errorf("observed: got %+v", obs)
	}
	want := `lab.xlsx: workbook, sheet 'Run 7'; header on row 4, 9 data rows (to row 14); 1 row left out as values maps them to ignore; columns not used: "Weight (mg)"`
	if st.Samples.String() != want {
		t.Errorf("samples source:\n got %s\nwant %s", st.Samples, want)
	}
}

// A texts values renames that no row holds is probably misspelt: a
// warning names it.
func TestLongFormUnusedValue(t *testing.T) {
	t.Parallel()
	text := strings.Replace(labStudy, "IAEA-N-1: ignore", "IAEA-N-1: ignore, Needles: foliage", 1)
	st, err := parse(t, text, map[string]string{"lab.csv": labCSV}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{`lab.csv: no row has the observable "needles", which samples.values.observable renames`}
	if !slices.Equal(st.Warnings, want) {
		t.Errorf("warnings:\n got %q\nwant %q", st.Warnings, want)
	}
}

// Mistakes in the long form are reported at their line in the study file.
func TestLongFormErrors(t *testing.T) {
	t.Parallel()
	files := map[string]string{"lab.csv": labCSV}
	edit := func(oldnew ...string) string { return strings.NewReplacer(oldnew...).Replace(labStudy) }
	tests := []struct {
		name string
		text string
		want string
	}{
		{"unknown key", edit("  unit: permil", "  units: permil"),
			"study.yaml:10: samples.units: unknown key (keys here: file, sheet, header_row, columns, values, unit)"},
		{"unknown role", edit("group: Treatment", "treatment: Treatment"),
			"study.yaml:6: samples.columns.treatment: unknown column role (roles: sample, group, observable, value, unit, depth_cm, horizon, block, species, note)"},
		{"header_row zero", edit("  unit: permil", "  header_row: 0"),
			`study.yaml:10: samples.header_row: expected a row number ≥ 1 (the header's line in a CSV file, its row in a sheet), got "0"`},
		{"header_row on a blank line", edit("  unit: permil", "  header_row: 3"),
			"study.yaml:10: samples.header_row: line 3 of lab.csv is blank, a comment or inside a quoted cell; the header must be there"},
		{"header_row on the title", edit("  unit: permil", "  header_row: 1"),
			`lab.csv:1: the row header_row names holds none of the columns "Sample ID", "Treatment", "Material", "d15N (permil)" that columns: maps; check their spelling against the header`},
		{"bad unit", edit("unit: permil", "unit: mg/g"),
			`study.yaml:10: samples.unit: unit "mg/g": expected permil (‰, the default) or atom% (15N atom percent)`},
		{"unknown observable in values", edit("Leaf: foliage", "Leaf: leaves"),
			`study.yaml:8: samples.values.observable.Leaf: unknown observable "leaves" (use foliage, roots, litter, soil, soil-ammonium, soil-nitrate, leachate-nitrate, fungi, n2o, nitrate-d18o, ecosystem, pool:<pool>, flux:<process>, or ignore to leave the rows out)`},
		{"values of a column that cannot be renamed", edit("    group: {", "    sample: {"),
			`study.yaml:9: samples.values.sample: values can rename observable, group, unit, not "sample"`},
		{"no file", edit("  file: lab.csv\n", ""),
			"study.yaml:5: samples.file: missing: the .csv or .xlsx file to read"},
		{"a list", "site: {template: temperate-deciduous-forest}\ncomparisons: [{control: a, treatment: b, years: 2}]\nsamples: [a.csv, b.csv]\n",
			"study.yaml:3: samples: expected the name of a .csv or .xlsx file, or a mapping {file, sheet, header_row, columns, values, unit}"},
		{"file missing on disk", edit("file: lab.csv", "file: gone.csv"),
			"study.yaml:5: samples.file: cannot read samples file gone.csv: file does not exist"},
		{"two roles, one header", edit("observable: Material", "observable: Treatment"),
			`study.yaml:6: samples.columns.observable: header "Treatment" is already the column of group`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			_, err := parse(t, tt.text, files, Options{})
			if err == nil || err.Error() != tt.want {
				t.Errorf("got  %v\nwant %s", err, tt.want)
			}
		})
	}
}

// The short form keeps working as before: the file name alone, strict
// columns (an unknown column is an error, not ignored).
func TestShortFormStrict(t *testing.T) {
	t.Parallel()
	text := "site: {template: temperate-deciduous-forest}\ncomparisons: [{control: a, treatment: b, years: 2}]\nsamples: rows.csv\n"
	_, err := parse(t, text, map[string]string{"rows.csv": "sample,group,observable,value,colour\ns1,a,soil,1,red\n"}, Options{})
	want := `rows.csv:1: colour: unknown column "colour" (columns: sample, group, observable, value or d15n, unit, depth_cm, horizon, block, species, note)`
	if err == nil || err.Error() != want {
		t.Errorf("got  %v\nwant %s", err, want)
	}
}
