package study

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"nlens/knowledge/input"
	"strings"
	"unicode/utf8"

	"golang.org/x/text/encoding/charmap"
	"golang.org/x/text/encoding/unicode"
)

// Dialect is how a CSV samples file is written, as detected from its bytes
// (never assumed): the text encoding, the field separator and the decimal
// mark. nlens check prints it.
type Dialect struct {
	// Encoding is "UTF-8", "UTF-8 with byte-order mark", "UTF-16LE with
	// byte-order mark", "UTF-16BE with byte-order mark" or "Windows-1252"
	// (text that is not UTF-8 and has no byte-order mark: Excel's plain
	// "CSV" on Windows; a warning says so).
	Encoding string
	// Separator is ',', ';' or '\t'.
	Separator rune
	// DecimalComma is set when numbers are written 1,5 rather than 1.5.
	DecimalComma bool
	// CROnly is set when lines end in a lone carriage return (old Mac
	// text files); they are read as line feeds.
	CROnly bool
}

// String describes the dialect: "semicolon-separated, decimal comma, UTF-8
// with byte-order mark".
func (d Dialect) String() string {
	dec := "decimal point"
	if d.DecimalComma {
		dec = "decimal comma"
	}
	s := fmt.Sprintf("%s-separated, %s, %s", separatorName(d.Separator), dec, d.Encoding)
	if d.CROnly {
		s += ", lines ending in a carriage return"
	}
	return s
}

// separators are the field separators a samples CSV may use, in the order
// ties are broken when no header can be found.
var separators = []rune{',', ';', '\t'}

func separatorName(r rune) string {
	switch r {
	case ',':
		return "comma"
	case ';':
		return "semicolon"
	case '\t':
		return "tab"
	}
	return fmt.Sprintf("%q", r)
}

// decodeText returns the text of a CSV file as UTF-8 and names its
// encoding: a UTF-8 or UTF-16 byte-order mark decides; text without one must
// be UTF-8, or is read as Windows-1252 (with a warning); text that looks
// like UTF-16 without a byte-order mark is refused, since its byte order
// would be a guess.
func decodeText(file string, data []byte) (text, encoding string, warn string, err error) {
	switch {
	case bytes.HasPrefix(data, []byte{0xEF, 0xBB, 0xBF}):
		data = data[3:]
		if line, ok := firstInvalidUTF8(data); !ok {
			return "", "", "", &input.Error{File: file, Line: line, Msg: "the file starts with a UTF-8 byte-order mark but this line is not UTF-8; save it again as CSV UTF-8"}
		}
		return string(data), "UTF-8 with byte-order mark", "", nil
	case bytes.HasPrefix(data, []byte{0xFF, 0xFE}), bytes.HasPrefix(data, []byte{0xFE, 0xFF}):
		order, name := unicode.LittleEndian, "UTF-16LE"
		if data[0] == 0xFE {
			order, name = unicode.BigEndian, "UTF-16BE"
		}
		if len(data)%2 != 0 {
			return "", "", "", &input.Error{File: file, Line: 1, Msg: fmt.Sprintf("the file starts with a %s byte-order mark but has an odd number of bytes (%d); it is cut short or not UTF-16", name, len(data))}
		}
		out, derr := unicode.UTF16(order, unicode.ExpectBOM).NewDecoder().Bytes(data)
		if derr != nil {
			return "", "", "", &input.Error{File: file, Line: 1, Msg: fmt.Sprintf("unreadable %s text: %v", name, derr)}
		}
		if i := bytes.IndexRune(out, utf8.RuneError); i >= 0 {
			return "", "", "", &input.Error{File: file, Line: 1 + bytes.Count(out[:i], []byte("\n")), Msg: fmt.Sprintf("this line is not valid %s (an unpaired surrogate)", name)}
		}
		return string(out), name + " with byte-order mark", "", nil
	}
	if looksUTF16(data) {
		return "", "", "", &input.Error{File: file, Line: 1, Msg: "the file looks like UTF-16 text without a byte-order mark; save it as CSV UTF-8, or as UTF-16 with a byte-order mark (Excel's \"Unicode text\")"}
	}
	if _, ok := firstInvalidUTF8(data); ok {
		return string(data), "UTF-8", "", nil
	}
	out, derr := charmap.Windows1252.NewDecoder().Bytes(data)
	if derr != nil {
		return "", "", "", &input.Error{File: file, Line: 1, Msg: fmt.Sprintf("the text is neither UTF-8 nor Windows-1252: %v", derr)}
	}
	line, _ := firstInvalidUTF8(data)
	warn = fmt.Sprintf("%s:%d: the file is not UTF-8 (first on this line) and has no byte-order mark, so it was read as Windows-1252, the encoding of Excel's plain CSV on Windows; if names with accents look wrong, save it as CSV UTF-8", file, line)
	return string(out), "Windows-1252", warn, nil
}

// firstInvalidUTF8 reports whether data is valid UTF-8 and, if not, the
// 1-based line of the first invalid byte.
func firstInvalidUTF8(data []byte) (line int, ok bool) {
	if utf8.Valid(data) {
		return 0, true
	}
	for i := 0; i < len(data); {
		r, size := utf8.DecodeRune(data[i:])
		if r == utf8.RuneError && size <= 1 {
			return 1 + bytes.Count(data[:i], []byte("\n")), false
		}
		i += size
	}
	return 1, false
}

// looksUTF16 reports whether text without a byte-order mark looks like
// UTF-16: in its first 512 bytes, at least a third of the bytes at even or
// at odd offsets are NUL (ASCII text in UTF-16 has a NUL in every other
// byte; CSV text has none).
func looksUTF16(data []byte) bool {
	n := min(len(data), 512) &^ 1
	if n < 4 {
		return false
	}
	var even, odd int
	for i := 0; i < n; i += 2 {
		if data[i] == 0 {
			even++
		}
		if data[i+1] == 0 {
			odd++
		}
	}
	return 3*even >= n/2 || 3*odd >= n/2
}

// csvRows splits text into rows with separator sep. Blank lines and lines
// starting with '#' are skipped; a malformed row (a stray quote) is a
// problem with its line, and reading goes on with the next row. At most
// limit rows are read when limit > 0.
func csvRows(file, text string, sep rune, limit int) (rows []gridRow, errs []error) {
	r := csv.NewReader(strings.NewReader(text))
	r.Comma = sep
	r.FieldsPerRecord = -1
	r.TrimLeadingSpace = sep != '\t'
	r.Comment = '#'
	r.ReuseRecord = false
	for limit <= 0 || len(rows) < limit {
		rec, err := r.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			// r.FieldPos must not be called here: after a malformed row it
			// may know no field and panic. The ParseError has the line.
			errs = append(errs, csvError(file, err))
			if len(errs) > 20 {
				break
			}
			continue
		}
		line, _ := r.FieldPos(0)
		rows = append(rows, gridRow{pos: line, cells: rec})
	}
	return rows, errs
}

func csvError(file string, err error) *input.Error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return &input.Error{File: file, Line: pe.StartLine, Msg: fmt.Sprintf("unreadable CSV row: %v", pe.Err)}
	}
	return &input.Error{File: file, Line: 1, Msg: fmt.Sprintf("unreadable CSV: %v", err)}
}

// detectWindow is how many rows separator detection reads: the header must
// be among them (a title block above it is a few rows).
const detectWindow = 200

// readCSV reads a CSV samples file into a grid: it decodes the text, finds
// the separator under which a header holding every required column can be
// read (an error when none or several can), and then the decimal mark from
// the numbers below the header.
func readCSV(file string, data []byte, cols *columnSet, headerRow int) (*table, error) {
	text, enc, warn, err := decodeText(file, data)
	if err != nil {
		return nil, err
	}
	d := Dialect{Encoding: enc}
	if strings.Contains(text, "\r") && !strings.Contains(text, "\n") {
		text = strings.ReplaceAll(text, "\r", "\n")
		d.CROnly = true
	}
	if strings.TrimSpace(text) == "" {
		return nil, &input.Error{File: file, Line: 1, Msg: "the samples file is empty; expected a header row sample,group,observable,value"}
	}
	type candidate struct {
		sep  rune
		head headerMatch
	}
	var found []candidate
	best := candidate{sep: ',', head: headerMatch{index: -1}}
	for _, sep := range separators {
		limit := detectWindow
		if headerRow > 0 {
			limit = 0 // the named row may be anywhere
		}
		rows, _ := csvRows(file, text, sep, limit)
		g := &grid{file: file, rows: rows}
		h := cols.findHeader(g, headerRow)
		if h.complete() {
			found = append(found, candidate{sep, h})
		}
		if h.index >= 0 && (best.head.index < 0 || h.matched > best.head.matched) {
			best = candidate{sep, h}
		}
	}
	switch {
	case len(found) == 1:
		best = found[0]
	case len(found) > 1:
		var ways []string
		for _, c := range found {
			ways = append(ways, fmt.Sprintf("%s-separated with the header on line %d", separatorName(c.sep), c.head.pos))
		}
		return nil, &input.Error{File: file, Line: found[0].head.pos, Msg: fmt.Sprintf("the file can be read in more than one way (%s); keep one separator in the file", strings.Join(ways, "; or "))}
	}
	d.Separator = best.sep
	rows, errs := csvRows(file, text, best.sep, 0)
	g := &grid{file: file, rows: rows}
	t := &table{grid: g, dialect: &d}
	if warn != "" {
		t.warnings = append(t.warnings, warn)
	}
	t.parseErrs = errs
	if len(rows) == 0 {
		// Only comments and malformed rows.
		if len(errs) > 0 {
			return t, nil
		}
		return nil, &input.Error{File: file, Line: 1, Msg: "the samples file is empty; expected a header row sample,group,observable,value"}
	}
	return t, nil
}

// detectDecimal sets the dialect's decimal mark from the numbers in the
// columns of the given roles below the header: 1,5 in any of them means a
// decimal comma, unless 1.5 appears as well, which makes the file
// ambiguous (an error naming one example of each).
func (t *table) detectDecimal(roles ...string) error {
	type example struct {
		pos  int
		text string
	}
	var comma, point *example
	for _, r := range t.grid.rows[t.head+1:] {
		for _, role := range roles {
			c, ok := t.col[role]
			if !ok {
				continue
			}
			s := strings.TrimSpace(r.cell(c))
			hasComma, hasPoint := strings.Contains(s, ","), strings.Contains(s, ".")
			switch {
			case hasComma && !hasPoint && comma == nil:
				if _, ok := parseNumber(s, true); ok {
					comma = &example{r.pos, s}
				}
			case hasPoint && !hasComma && point == nil:
				if _, ok := parseNumber(s, false); ok {
					point = &example{r.pos, s}
				}
			}
		}
		if comma != nil && point != nil {
			later := max(comma.pos, point.pos)
			return t.grid.errAt(later, -1, "", "the numbers mix a decimal comma (%s: %q) and a decimal point (%s: %q), so the file could be read either way; write every number with one decimal mark", t.grid.where(comma.pos), comma.text, t.grid.where(point.pos), point.text)
		}
	}
	t.dialect.DecimalComma = comma != nil
	return nil
}
