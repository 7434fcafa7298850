package study

import (
	"fmt"
	"testing"

	"nlens/rank/study/sampletest"
)

// benchRows is a lab table of n samples (invented values): two groups,
// foliage and soil, with a depth column.
func benchRows(n int) [][]string {
	rows := [][]string{{"sample", "group", "observable", "value", "unit", "depth_cm"}}
	for i := range n {
		group, obs, depth := "control", "foliage", ""
		if i%2 == 1 {
			group = "fert"
		}
		if i%4 >= 2 {
			obs, depth = "soil", "0-10"
		}
		rows = append(rows, []string{fmt.Sprintf("s%d", i), group, obs, fmt.Sprintf("%.2f", float64(i%50)/10-2), "permil", depth})
	}
	return rows
}

// BenchmarkReadSamplesCSV reads 5000 rows of semicolon-separated CSV with
// decimal commas and a byte-order mark (detection and parsing).
func BenchmarkReadSamplesCSV(b *testing.B) {
	data := sampletest.CSV(benchRows(5000), sampletest.CSVOptions{Separator: ';', DecimalComma: true, Encoding: sampletest.UTF8BOM})
	site := testSite(&testing.T{})
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		if _, err := ReadSamples("b.csv", data, &SamplesSpec{File: "b.csv"}, site, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkReadSamplesXLSX reads the same 5000 rows from a workbook.
func BenchmarkReadSamplesXLSX(b *testing.B) {
	data := sampletest.Workbook(b, sampletest.Sheet{Name: "S", Rows: benchRows(5000)})
	site := testSite(&testing.T{})
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		if _, err := ReadSamples("b.xlsx", data, &SamplesSpec{File: "b.xlsx"}, site, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}
