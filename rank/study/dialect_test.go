package study

import (
	"math"
	"strings"
	"testing"

	"nlens/forward"
	"nlens/knowledge"
	"nlens/rank/study/sampletest"
)

// labRows is one invented table of samples, written below in every format
// a lab may send. Its statistics, by hand: control foliage −1.5, −0.5, −1.0
// → mean −1.0, sd 0.5; fert foliage 1.25, 0.75 → mean 1.0, sd √0.125 =
// 0.353553; control soil 3.5, 4.5 → mean 4.0, sd √0.5 = 0.707107; fert soil
// 4.25, 4.75 → mean 4.5, sd 0.353553.
var labRows = [][]string{
	{"sample", "group", "observable", "value", "unit", "note"},
	{"c1", "control", "foliage", "-1.5", "permil", "plot 1; upper crown"},
	{"c2", "control", "foliage", "-0.5", "permil", ""},
	{"c3", "control", "foliage", "-1.0", "permil", `said "fine"`},
	{"t1", "fert", "foliage", "1.25", "permil", ""},
	{"t2", "fert", "foliage", "0.75", "permil", ""},
	{"c1", "control", "soil", "3.5", "", ""},
	{"c2", "control", "soil", "4.5", "", ""},
	{"t1", "fert", "soil", "4.25", "", ""},
	{"t2", "fert", "soil", "4.75", "", ""},
}

// labStats are labRows' statistics computed by hand (see labRows).
var labStats = map[groupKey]Stat{
	{"control", "foliage"}: {Mean: -1.0, SD: 0.5, N: 3},
	{"fert", "foliage"}:    {Mean: 1.0, SD: 0.353553, N: 2},
	{"control", "soil"}:    {Mean: 4.0, SD: 0.707107, N: 2},
	{"fert", "soil"}:       {Mean: 4.5, SD: 0.353553, N: 2},
}

// checkLabStats compares groups with labStats (sds to the 6 decimals
// written there).
func checkLabStats(t *testing.T, groups []SampleGroup) {
	t.Helper()
	if len(groups) != len(labStats) {
		t.Fatalf("got %d groups, want %d: %+v", len(groups), len(labStats), groups)
	}
	for _, g := range groups {
		want, ok := labStats[groupKey{g.Group, g.Observable}]
		if !ok || math.Abs(g.Mean-want.Mean) > 1e-12 || math.Abs(g.SD-want.SD) > 1e-6 || g.N != want.N {
			t.Errorf("group %s %s: got %+v, want %+v", g.Group, g.Observable, g.Stat, want)
		}
	}
}

func testSite(t *testing.T) *forward.Site {
	t.Helper()
	s, err := forward.LoadSite("temperate-deciduous-forest", knowledge.MustDefault())
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// Every dialect of the same table gives the same statistics, and the
// detected dialect is reported as written.
func TestCSVDialects(t *testing.T) {
	t.Parallel()
	site := testSite(t)
	windows1252 := strings.ReplaceAll(string(sampletest.CSV(labRows, sampletest.CSVOptions{Separator: ';', DecimalComma: true})), "permil", "\x89") // ‰ is 0x89 in Windows-1252
	// Each data row ends in a separator more than the header has.
	head, body, _ := strings.Cut(string(sampletest.CSV(labRows, sampletest.CSVOptions{Separator: ';', DecimalComma: true})), "\n")
	trailing := []byte(head + "\n" + strings.ReplaceAll(body, "\n", ";\n"))
	tests := []struct {
		name string
		data []byte
		want string
		warn string
	}{
		{"comma", sampletest.CSV(labRows, sampletest.CSVOptions{}), "comma-separated, decimal point, UTF-8", ""},
		{"comma, BOM, quoted header", sampletest.CSV(labRows, sampletest.CSVOptions{Encoding: sampletest.UTF8BOM, QuoteHeader: true}), "comma-separated, decimal point, UTF-8 with byte-order mark", ""},
		{"semicolon, decimal comma, BOM", sampletest.CSV(labRows, sampletest.CSVOptions{Separator: ';', DecimalComma: true, Encoding: sampletest.UTF8BOM}), "semicolon-separated, decimal comma, UTF-8 with byte-order mark", ""},
		{"semicolon, quoted header, CRLF", sampletest.CSV(labRows, sampletest.CSVOptions{Separator: ';', DecimalComma: true, QuoteHeader: true, LineEnd: "\r\n"}), "semicolon-separated, decimal comma, UTF-8", ""},
		{"semicolon, decimal point", sampletest.CSV(labRows, sampletest.CSVOptions{Separator: ';'}), "semicolon-separated, decimal point, UTF-8", ""},
		{"tab, UTF-16LE", sampletest.CSV(labRows, sampletest.CSVOptions{Separator: '\t', Encoding: sampletest.UTF16LE, LineEnd: "\r\n"}), "tab-separated, decimal point, UTF-16LE with byte-order mark", ""},
		{"comma, UTF-16BE", sampletest.CSV(labRows, sampletest.CSVOptions{Encoding: sampletest.UTF16BE}), "comma-separated, decimal point, UTF-16BE with byte-order mark", ""},
		{"semicolon, UTF-16LE, decimal comma", sampletest.CSV(labRows, sampletest.CSVOptions{Separator: ';', DecimalComma: true, Encoding: sampletest.UTF16LE}), "semicolon-separated, decimal comma, UTF-16LE with byte-order mark", ""},
		{"old Mac line ends", sampletest.CSV(labRows, sampletest.CSVOptions{LineEnd: "\r"}), "comma-separated, decimal point, UTF-8, lines ending in a carriage return", ""},
		{"Windows-1252", []byte(windows1252), "semicolon-separated, decimal comma, Windows-1252", "rows.csv:2: the file is not UTF-8 (first on this line) and has no byte-order mark, so it was read as Windows-1252"},
		{"trailing separators on the rows", trailing, "semicolon-separated, decimal comma, UTF-8", ""},
		{"comment and blank lines first", append([]byte("# exported 2026-03-02\n\n"), sampletest.CSV(labRows, sampletest.CSVOptions{Separator: ';', DecimalComma: true})...), "semicolon-separated, decimal comma, UTF-8", ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			s, err := ReadSamples("rows.csv", tt.data, &SamplesSpec{File: "rows.csv"}, site, Options{})
			if err != nil {
				t.Fatal(err)
			}
			checkLabStats(t, s.Groups)
			if s.Source.Dialect == nil || s.Source.Dialect.String() != tt.want {
				t.Errorf("dialect: got %v, want %q", s.Source.Dialect, tt.want)
			}
			warns := strings.Join(s.Warnings, "\n")
			if (tt.warn == "") != (warns == "") || !strings.Contains(warns, tt.warn) {
				t.Errorf("warnings: got %q, want %q", warns, tt.warn)
			}
		})
	}
}

// Files that cannot be read one way only are refused with a message that
// says which readings were possible, or why none is.
func TestCSVDialectErrors(t *testing.T) {
	t.Parallel()
	site := testSite(t)
	semi := string(sampletest.CSV(labRows, sampletest.CSVOptions{Separator: ';', DecimalComma: true}))
	tests := []struct {
		name string
		data string
		want string
	}{
		{"decimal comma and point mixed", strings.Replace(semi, "4,25", "4.25", 1),
			`rows.csv:9: the numbers mix a decimal comma (line 2: "-1,5") and a decimal point (line 9: "4.25"), so the file could be read either way; write every number with one decimal mark`},
		{"two tables, two separators", "sample,group,observable,value\nsample;group;observable;value\ns1;a;soil;1\n",
			"rows.csv:1: the file can be read in more than one way (comma-separated with the header on line 1; or semicolon-separated with the header on line 2); keep one separator in the file"},
		{"UTF-16 without a byte-order mark", string(sampletest.CSV(labRows, sampletest.CSVOptions{Encoding: sampletest.UTF16LE})[2:]),
			`rows.csv:1: the file looks like UTF-16 text without a byte-order mark; save it as CSV UTF-8, or as UTF-16 with a byte-order mark (Excel's "Unicode text")`},
		{"UTF-16 cut short", string(sampletest.CSV(labRows, sampletest.CSVOptions{Encoding: sampletest.UTF16LE})[:101]),
			"rows.csv:1: the file starts with a UTF-16LE byte-order mark but has an odd number of bytes (101); it is cut short or not UTF-16"},
		{"UTF-8 byte-order mark, then not UTF-8", "\ufeffsample,group,observable,value\ns1,a,soil,1\ns2,\xff,soil,2\n",
			"rows.csv:3: the file starts with a UTF-8 byte-order mark but this line is not UTF-8; save it again as CSV UTF-8"},
		{"row in another separator", "sample,group,observable,value\ns1,a,soil,1\ns2;a;soil;2\n",
			"rows.csv:3: expected 4 fields like the header, got 1; this row is semicolon-separated, the header comma-separated"},
		{"decimal point in a decimal-comma file, one field", "sample;group;observable;value\ns1;a;soil;1,5\ns2;a;soil;2\ns3;a;soil;2,0.5\n",
			`rows.csv:4: value: expected a number with a decimal comma like the rest of the file, got "2,0.5"`},
		{"missing value", "sample,group,observable,value\ns1,a,soil,1\ns2,a,soil,\n",
			"rows.csv:3: value: missing value; give the sample's value or remove its row"},
		{"hexadecimal is no number", "sample,group,observable,value\ns1,a,soil,0x1p-2\ns2,a,soil,1\n",
			`rows.csv:2: value: expected a number, got "0x1p-2"`},
		{"empty", "", "rows.csv:1: the samples file is empty; expected a header row sample,group,observable,value"},
		{"only a byte-order mark and blanks", "\ufeff\n\n", "rows.csv:1: the samples file is empty; expected a header row sample,group,observable,value"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			_, err := ReadSamples("rows.csv", []byte(tt.data), &SamplesSpec{File: "rows.csv"}, site, Options{})
			if err == nil {
				t.Fatalf("no error; want %q", tt.want)
			}
			if err.Error() != tt.want {
				t.Errorf("got  %q\nwant %q", err.Error(), tt.want)
			}
		})
	}
}

// Control characters in a file never reach a message raw (issue 15): they
// are escaped as Go's strconv.Quote writes them.
func TestControlCharactersEscaped(t *testing.T) {
	t.Parallel()
	site := testSite(t)
	tests := []struct {
		name string
		data string
		want string
	}{
		{"escape sequence in a header", "sample,group,observable,value,\x1b[31mred\n", `rows.csv:1: \x1b[31mred: unknown column "\x1b[31mred"`},
		{"NUL in a group", "sample,group,observable,value\ns1,a\x00,soil,1\n", `rows.csv:2: group: group "a\x00" has only one sample of soil`},
		{"bell in a value", "sample,group,observable,value\ns1,a,soil,1\a\ns2,a,soil,2\n", `rows.csv:2: value: expected a number, got "1\a"`},
		{"carriage return in an observable", "sample,group,observable,value\ns1,a,\"so\ril\",1\n", `rows.csv:2: observable: unknown observable "so\ril"`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			_, err := ReadSamples("rows.csv", []byte(tt.data), &SamplesSpec{File: "rows.csv"}, site, Options{})
			if err == nil || !strings.HasPrefix(err.Error(), tt.want) {
				t.Fatalf("got %v\nwant a message starting %q", err, tt.want)
			}
			if strings.ContainsFunc(err.Error(), isControl) {
				t.Errorf("the message holds a control character: %q", err.Error())
			}
		})
	}
}

// isControl reports a C0 or C1 control character or DEL, other than the
// line feed that separates the messages of a list.
func isControl(r rune) bool { return r != '\n' && (r < 0x20 || (r >= 0x7f && r < 0xa0)) }
