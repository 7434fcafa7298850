package study

import (
	"bytes"
	"fmt"
	"math"
	"nlens/knowledge/input"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/stat"

	"nlens/forward"
)

// SampleGroup is one group's statistics of one observable, from the rows of
// a samples file.
type SampleGroup struct {
	Group, Observable string
	Stat
	Line int // first row of the group: its line (CSV) or row number (sheet)
	// Samples are the group's rows in file order (values in ‰ after any
	// atom % conversion; pool sizes and fluxes as given).
	Samples []Sample
}

// Sample is one row of a samples file.
type Sample struct {
	ID    string
	Value float64
	Block string // the block of a paired design, "" when not given
}

// Samples is what a samples file holds: each group's statistics, the
// warnings to show, and how the file was read.
type Samples struct {
	Groups   []SampleGroup
	Warnings []string
	Source   SampleSource
}

// SampleSource says how a samples file was read; nlens check prints it.
type SampleSource struct {
	File string
	// Dialect is the CSV dialect detected (nil for a workbook).
	Dialect *Dialect
	// Sheet is the sheet read from a workbook ("" for CSV).
	Sheet string
	// HeaderRow and LastRow are the header's and the last data row's line
	// (CSV) or row number (sheet).
	HeaderRow, LastRow int
	// Rows is the number of data rows read.
	Rows int
	// Unused lists the columns that name no role (long form only).
	Unused []string
	// AtomPercent is the number of values converted from 15N atom percent
	// (see AtomPercentConversion).
	AtomPercent int
	// ForestFloor is the number of soil rows assigned to the forest-floor
	// observable by their depth or horizon; Left out counts rows the values
	// mapping sends to "ignore".
	ForestFloor, LeftOut int
}

// String describes the source in one paragraph:
//
//	rows.csv: CSV, semicolon-separated, decimal comma, UTF-8; header on line 1, 12 rows (lines 2–13)
func (s SampleSource) String() string {
	var b strings.Builder
	unit := "line"
	if s.Dialect != nil {
		fmt.Fprintf(&b, "%s: CSV, %s", s.File, s.Dialect)
	} else {
		unit = "row"
		fmt.Fprintf(&b, "%s: workbook, sheet %s", s.File, sheetRef(s.Sheet))
	}
	fmt.Fprintf(&b, "; header on %s %d, %s", unit, s.HeaderRow, count(s.Rows, "data row"))
	if s.Rows > 0 {
		fmt.Fprintf(&b, " (to %s %d)", unit, s.LastRow)
	}
	if s.LeftOut > 0 {
		fmt.Fprintf(&b, "; %s left out as values maps them to ignore", count(s.LeftOut, "row"))
	}
	if s.AtomPercent > 0 {
		fmt.Fprintf(&b, "; %s converted from 15N atom %% with R_AIR = %g", count(s.AtomPercent, "value"), forward.RAir)
	}
	if s.ForestFloor > 0 {
		fmt.Fprintf(&b, "; %s assigned to forest-floor by depth or horizon", count(s.ForestFloor, "soil row"))
	}
	if len(s.Unused) > 0 {
		fmt.Fprintf(&b, "; columns not used: %s", strings.Join(s.Unused, ", "))
	}
	return b.String()
}

// count writes n things: "1 row", "2 rows".
func count(n int, thing string) string {
	if n == 1 {
		return "1 " + thing
	}
	return fmt.Sprintf("%d %ss", n, thing)
}

// MaxSamplesBytes is the largest samples file nlens reads (64 MiB): a lab's
// table of thousands of rows is a few MB.
const MaxSamplesBytes = 64 << 20

// ParseSamples reads a samples file written for nlens (the short form,
// samples: FILE): a CSV in any detected dialect or an .xlsx workbook, with
// a header row sample, group, observable and value (or d15n), optionally
// unit, depth_cm, horizon, block, species and note. Every bad row is an
// error with its position; groups are summarised by mean, sample sd and n.
func ParseSamples(file string, data []byte, site *forward.Site, opt Options) (rows []SampleGroup, warnings []string, err error) {
	s, err := ReadSamples(file, data, &SamplesSpec{File: file}, site, opt)
	if err != nil {
		return nil, nil, err
	}
	return s.Groups, s.Warnings, nil
}

// ReadSamples reads a samples file as spec describes it (DESIGN §6):
// format (CSV or .xlsx, from the bytes and the name), sheet, header row,
// the lab's column names and values, and the default unit.
func ReadSamples(file string, data []byte, spec *SamplesSpec, site *forward.Site, opt Options) (s *Samples, err error) {
	defer input.Recover(file, "samples file", &err)
	if len(data) > MaxSamplesBytes {
		return nil, &input.Error{File: file, Msg: fmt.Sprintf("the samples file has %d bytes; nlens reads at most %d MiB", len(data), MaxSamplesBytes>>20)}
	}
	cols := spec.columnSet()
	var t *table
	switch kind := fileKind(file, data); kind {
	case "xlsx":
		t, err = readWorkbook(file, data, spec.Sheet)
	case "csv":
		if spec.Sheet != "" {
			return nil, &input.Error{File: file, Line: 1, Msg: fmt.Sprintf("sheet %q is given, but this is a CSV file, which has no sheets", spec.Sheet)}
		}
		t, err = readCSV(file, data, cols, spec.HeaderRow)
	default:
		return nil, &input.Error{File: file, Msg: kind}
	}
	if err != nil {
		return nil, err
	}
	t.cols = cols
	t.spec = spec
	return t.tabulate(site, opt)
}

// fileKind returns "xlsx", "csv" or a message saying why the file cannot
// be read. A zip archive is an .xlsx workbook whatever its name.
func fileKind(file string, data []byte) string {
	ext := strings.ToLower(filepath.Ext(file))
	switch {
	case ext == ".ods":
		return "an OpenDocument spreadsheet (.ods) cannot be read; save it as .xlsx or CSV"
	case ext == ".xls" || bytes.HasPrefix(data, []byte{0xD0, 0xCF, 0x11, 0xE0}):
		return "an Excel 97–2003 workbook (.xls) or a password-protected workbook cannot be read; save it as .xlsx (without a password) or CSV"
	case bytes.HasPrefix(data, []byte("PK\x03\x04")):
		return "xlsx"
	case ext == ".xlsx" || ext == ".xlsm":
		return "not an .xlsx workbook: the file is not a zip archive"
	}
	return "csv"
}

// table is a grid with its header found and its columns assigned.
type table struct {
	grid      *grid
	dialect   *Dialect  // CSV only
	book      *workbook // workbook only
	cols      *columnSet
	spec      *SamplesSpec
	head      int            // index of the header row in grid.rows
	col       map[string]int // role → column
	unused    []string
	warnings  []string
	parseErrs []error // malformed CSV rows
	textComma string  // the warning that a sheet's text numbers use a decimal comma
}

// header finds the header row and assigns each column to a role; problems
// are added to errs.
func (t *table) header(errs *problems) {
	g := t.grid
	h := t.cols.findHeader(g, t.spec.HeaderRow)
	if h.index < 0 {
		errs.add(t.spec.headerRowError(g))
		return
	}
	if h.matched == 0 {
		errs.add(g.errAt(g.rows[h.index].pos, -1, "", "%s", t.cols.noHeaderMsg(t.spec.HeaderRow)))
		return
	}
	t.head = h.index
	t.col = map[string]int{}
	hr := g.rows[h.index]
	cells := slices.Clone(hr.cells)
	for c := range cells {
		// A header cell merged across columns names the first of them.
		if m := t.book.mergedAt(hr.pos, c); m != nil && m.r1 == hr.pos-1 && c != m.c1 {
			cells[c] = ""
		}
	}
	hasData := func(c int) bool {
		for _, r := range g.rows[h.index+1:] {
			if r.cell(c) != "" {
				return true
			}
		}
		return false
	}
	for c, text := range cells {
		name := strings.TrimSpace(strings.TrimPrefix(text, "\ufeff"))
		if name == "" {
			if !hasData(c) {
				continue // an empty column beside the table
			}
			if t.cols.strict {
				errs.add(g.errAt(hr.pos, c, "", "column %s holds values but has no name in the header", t.columnRef(c)))
			} else {
				t.unused = append(t.unused, fmt.Sprintf("%s (no name)", t.columnRef(c)))
			}
			continue
		}
		role := t.cols.role(name)
		if role == "" {
			if !t.cols.strict || !h.complete() {
				t.unused = append(t.unused, strconv.Quote(name))
				continue
			}
			errs.add(g.errAt(hr.pos, c, escapeText(name), "unknown column %q (columns: sample, group, observable, value or d15n, unit, depth_cm, horizon, block, species, note)", name))
			continue
		}
		if prev, dup := t.col[role]; dup {
			msg := fmt.Sprintf("column appears twice in the header (first as %s)", t.columnRef(prev))
			if role == "value" && normHeader(name) != normHeader(cells[prev]) {
				msg = fmt.Sprintf("the header has both %q and %q for the values; give them in one column", strings.TrimSpace(cells[prev]), name)
			}
			errs.add(g.errAt(hr.pos, c, escapeText(name), "%s", msg))
			continue
		}
		t.col[role] = c
	}
	for _, role := range requiredRoles {
		if _, ok := t.col[role]; !ok {
			errs.add(g.errAt(hr.pos, -1, t.cols.label(role), "%s", t.cols.missingColumnMsg(role)))
		}
	}
}

// columnRef names a column: "E" in a sheet, "field 5" in a CSV file.
func (t *table) columnRef(c int) string {
	if t.grid.sheet != "" {
		return columnName(c)
	}
	return fmt.Sprintf("field %d", c+1)
}

// groupKey identifies a group's observable.
type groupKey struct{ group, obs string }

// groupAcc gathers one group's rows of one observable.
type groupAcc struct {
	samples []Sample
	pos     int
	depths  map[string]bool
	species map[string]bool
}

// unitUse is the first unit seen for an observable.
type unitUse struct {
	text string // as written (pool sizes and fluxes) or UnitPermil/UnitAtomPercent
	pos  int
}

// tabulate reads the rows below the header into group statistics.
func (t *table) tabulate(site *forward.Site, opt Options) (*Samples, error) {
	g := t.grid
	var errs problems
	for _, e := range t.parseErrs {
		errs.add(e)
	}
	t.header(&errs)
	if t.col == nil || len(errs.list) > len(t.parseErrs) {
		return nil, errs.err()
	}
	first := t.head + 1
	if t.book != nil {
		end := t.book.headerEnd(g.rows[t.head].pos)
		for first < len(g.rows) && g.rows[first].pos <= end {
			first++
		}
	}
	if t.dialect != nil {
		if err := t.detectDecimal("value", "depth_cm"); err != nil {
			errs.add(err)
			return nil, errs.err()
		}
	}
	src := SampleSource{File: g.file, Dialect: t.dialect, Sheet: g.sheet, HeaderRow: g.rows[t.head].pos, Unused: t.unused}
	groups := map[groupKey]*groupAcc{}
	var order []groupKey
	seen := map[string]int{}        // sample, observable and layer → row
	units := map[string]unitUse{}   // observable → first unit
	floorPooled := map[string]int{} // group → first forest-floor row pooled with soil
	used := map[string]map[string]bool{}
	width := len(g.rows[t.head].cells)
	for _, r := range g.rows[first:] {
		if errs.full() {
			break
		}
		if t.dialect != nil && len(r.cells) != width && !emptyBeyond(r.cells, width) {
			errs.add(g.errAt(r.pos, -1, "", "%s", t.widthMsg(r, width)))
			continue
		}
		t.readRow(r, site, opt, &errs, rowState{groups, &order, seen, units, floorPooled, used, &src})
	}
	if err := errs.err(); err != nil {
		return nil, err
	}
	if len(order) == 0 {
		return nil, g.errAt(g.rows[t.head].pos, -1, "", "the samples file has a header but no rows")
	}
	out := &Samples{Source: src}
	out.Warnings = append(out.Warnings, t.warnings...)
	out.Warnings = append(out.Warnings, t.book.mergeWarnings(t)...)
	if t.textComma != "" {
		out.Warnings = append(out.Warnings, t.textComma)
	}
	out.Warnings = append(out.Warnings, t.spec.unusedValueWarnings(g.file, used)...)
	for _, k := range order {
		a := groups[k]
		values := make([]float64, len(a.samples))
		for i, s := range a.samples {
			values[i] = s.Value
		}
		if len(values) < 2 {
			errs.add(g.errAt(a.pos, t.col["group"], "group", "group %q has only one sample of %s; a standard error needs n ≥ 2", k.group, k.obs))
			continue
		}
		mean, sd := stat.MeanStdDev(values, nil)
		if math.IsNaN(mean) || math.IsInf(mean, 0) || math.IsNaN(sd) || math.IsInf(sd, 0) {
			errs.add(g.errAt(a.pos, t.col["value"], "value", "the mean or sd of %s in group %q is beyond floating-point range; check the values", k.obs, k.group))
			continue
		}
		out.Groups = append(out.Groups, SampleGroup{Group: k.group, Observable: k.obs, Stat: Stat{Mean: mean, SD: sd, N: len(values)}, Line: a.pos, Samples: a.samples})
		at := fmt.Sprintf("%s:%d", g.file, a.pos)
		if g.sheet != "" {
			at = fmt.Sprintf("%s: %s row %d", g.file, sheetRef(g.sheet), a.pos)
		}
		if len(a.depths) > 1 {
			out.Warnings = append(out.Warnings, fmt.Sprintf("%s: group %q pools %s samples from %d different depths as replicates", at, k.group, k.obs, len(a.depths)))
		}
		if len(a.species) > 1 {
			out.Warnings = append(out.Warnings, fmt.Sprintf("%s: group %q pools %s samples of %d species as replicates", at, k.group, k.obs, len(a.species)))
		}
		if pos, ok := floorPooled[k.group]; ok && k.obs == "soil" {
			out.Warnings = append(out.Warnings, fmt.Sprintf("%s: group %q: forest-floor samples (depth ≤ 0 cm or an O horizon, first on %s) are pooled with the mineral soil, because site %q has no forest-floor pool", at, k.group, g.where(pos), site.ID))
		}
	}
	if err := errs.err(); err != nil {
		return nil, err
	}
	return out, nil
}

// number reads a number of the table: in a CSV file with its decimal
// mark; in a sheet, where numbers are stored with a point, a number stored
// as text may also have a decimal comma (as some instrument software
// writes them; tabulate says so).
func (t *table) number(s string) (float64, bool) {
	if t.dialect != nil {
		return parseNumber(s, t.dialect.DecimalComma)
	}
	if v, ok := parseNumber(s, false); ok {
		return v, true
	}
	return parseNumber(s, true)
}

// emptyBeyond reports whether a row longer than the header has nothing in
// its extra fields (trailing separators).
func emptyBeyond(cells []string, width int) bool {
	if len(cells) < width {
		return false
	}
	for _, c := range cells[width:] {
		if strings.TrimSpace(c) != "" {
			return false
		}
	}
	return true
}

// widthMsg says that a CSV row has another number of fields than the
// header, and when the row would fit with another separator, which.
func (t *table) widthMsg(r gridRow, width int) string {
	msg := fmt.Sprintf("expected %d fields like the header, got %d", width, len(r.cells))
	if len(r.cells) == 1 {
		for _, sep := range separators {
			if sep != t.dialect.Separator && strings.Count(r.cells[0], string(sep)) == width-1 {
				return msg + fmt.Sprintf("; this row is %s-separated, the header %s-separated", separatorName(sep), separatorName(t.dialect.Separator))
			}
		}
	}
	return msg
}

// rowState is what reading rows accumulates.
type rowState struct {
	groups      map[groupKey]*groupAcc
	order       *[]groupKey
	seen        map[string]int
	units       map[string]unitUse
	floorPooled map[string]int
	used        map[string]map[string]bool // values mapping role → lab texts met
	src         *SampleSource
}

// readRow reads one data row into st; a problem is added to errs and the
// row skipped.
func (t *table) readRow(r gridRow, site *forward.Site, opt Options, errs *problems, st rowState) bool {
	g := t.grid
	get := func(role string) string {
		if c, ok := t.col[role]; ok {
			return strings.TrimSpace(r.cell(c))
		}
		return ""
	}
	bad := func(role, format string, args ...any) bool {
		c, ok := t.col[role]
		if !ok {
			c = -1
		}
		errs.add(g.errAt(r.pos, c, role, format, args...))
		return false
	}
	sample, group, obsText, value := get("sample"), get("group"), get("observable"), get("value")
	switch {
	case sample == "":
		return bad("sample", "missing sample id")
	case group == "":
		return bad("group", "missing group")
	}
	group = t.spec.mapValue("group", group, st.used)
	obs := t.spec.mapValue("observable", obsText, st.used)
	if obs == ignoreValue {
		st.src.LeftOut++
		return false
	}
	if !forward.KnownObservable(obs) && forward.KnownObservable(strings.ToLower(obs)) {
		obs = strings.ToLower(obs)
	}
	if msg := checkObservable(site, obs); msg != "" {
		return bad("observable", "%s", msg)
	}
	decimalComma := t.dialect != nil && t.dialect.DecimalComma
	v, ok := t.number(value)
	if ok && t.book != nil && strings.Contains(value, ",") && t.textComma == "" {
		t.textComma = fmt.Sprintf("%s: %s!%s: numbers stored as text with a decimal comma (first %q) are read as numbers", g.file, sheetRef(g.sheet), cellName(t.col["value"], r.pos), value)
	}
	if !ok {
		c := t.col["value"]
		switch what, isNot := t.book.notNumber(r.pos, c); {
		case value == "" && t.book.formulaWithoutResult(r.pos, c):
			return bad("value", "the cell holds a formula but no saved result; open the workbook in a spreadsheet program and save it again")
		case value == "":
			return bad("value", "missing value; give the sample's value or remove its row")
		case isNot:
			return bad("value", "expected a number, got %s (%q)", what, value)
		case decimalComma && strings.Contains(value, "."):
			return bad("value", "expected a number with a decimal comma like the rest of the file, got %q", value)
		}
		return bad("value", "expected a number, got %q", value)
	}
	if what, isNot := t.book.notNumber(r.pos, t.col["value"]); isNot {
		return bad("value", "expected a number, got %s (%q)", what, value)
	}
	logRatio := forward.LogRatioName(obs)
	unitText := get("unit")
	if unitText == "" {
		unitText = t.spec.Unit
	}
	unitText = t.spec.mapValue("unit", unitText, st.used)
	unit := strings.ToLower(strings.Join(strings.Fields(unitText), " "))
	if !logRatio {
		unit = deltaUnit(unitText)
		switch {
		case unit == "":
			return bad("unit", "unit %q: expected %s", unitText, acceptedUnits)
		case unit == UnitAtomPercent && (obs == "nitrate-d18o" || obs == "n2o-sp"):
			return bad("unit", "atom%% applies to 15N; %s is given in ‰", obs)
		case unit == UnitAtomPercent:
			d, msg := fromAtomPercent(v)
			if msg != "" {
				return bad("value", "%s", msg)
			}
			v = d
		}
	}
	if msg := valueProblem(obs, v, opt); msg != "" {
		if unit == UnitAtomPercent {
			msg = fmt.Sprintf("converted from %s atom%%: %s", value, msg)
		}
		return bad("value", "%s", msg)
	}
	depth, horizon := get("depth_cm"), get("horizon")
	lay, field, msg := layerOf(depth, horizon, t.number)
	if msg != "" {
		return bad(field, "%s", msg)
	}
	if lay == layerFloor && obs == "soil" {
		if hasForestFloor(site) {
			obs = forestFloor
			st.src.ForestFloor++
		} else if _, ok := st.floorPooled[group]; !ok && site != nil {
			st.floorPooled[group] = r.pos
		}
	}
	if u, ok := st.units[obs]; ok && u.text != unit {
		return bad("unit", "unit %q differs from %q used for %s on %s; give one observable in one unit", unitText, u.text, obs, g.where(u.pos))
	} else if !ok {
		st.units[obs] = unitUse{unit, r.pos}
	}
	sk := sample + "\x00" + obs + "\x00" + depth + "\x00" + horizon
	if prev, dup := st.seen[sk]; dup {
		return bad("sample", "sample %q already has a value of %s on %s", sample, obs, g.where(prev))
	}
	st.seen[sk] = r.pos
	k := groupKey{group, obs}
	a := st.groups[k]
	if a == nil {
		a = &groupAcc{pos: r.pos, depths: map[string]bool{}, species: map[string]bool{}}
		st.groups[k] = a
		*st.order = append(*st.order, k)
	}
	a.samples = append(a.samples, Sample{ID: sample, Value: v, Block: get("block")})
	a.depths[depth+"\x00"+horizon] = true
	if s := get("species"); s != "" {
		a.species[s] = true
	}
	if unit == UnitAtomPercent {
		st.src.AtomPercent++
	}
	st.src.Rows++
	st.src.LastRow = r.pos
	return true
}
