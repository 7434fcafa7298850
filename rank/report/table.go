package report

import (
	"bytes"
	"fmt"
	"io"
	"strings"

	"github.com/olekukonko/tablewriter"
	"github.com/olekukonko/tablewriter/renderer"
	"github.com/olekukonko/tablewriter/tw"
)

// Formats every command accepts for its main output.
const (
	FormatTable    = "table"
	FormatText     = "text"
	FormatMarkdown = "markdown"
	FormatJSON     = "json"
	FormatBib      = "bib"
)

// table renders rows under headers as plain columns with a rule under the
// header; align gives 'l' or 'r' per column. It renders into a buffer first
// because tablewriter swallows write errors (GO-NOTES §1).
func table(w io.Writer, headers []string, align string, rows [][]string) error {
	return renderTable(w, headers, align, rows, false, nil)
}

// wrappedTable is table with a maximum width per column (0: none); longer
// cells wrap onto continuation lines at word boundaries.
func wrappedTable(w io.Writer, headers []string, align string, rows [][]string, maxWidths []int) error {
	return renderTable(w, headers, align, rows, false, maxWidths)
}

// markdownTable renders a GitHub-flavoured Markdown table, escaping |.
func markdownTable(w io.Writer, headers []string, align string, rows [][]string) error {
	esc := func(s []string) []string {
		out := make([]string, len(s))
		for i, v := range s {
			out[i] = strings.ReplaceAll(v, "|", `\|`)
		}
		return out
	}
	escaped := make([][]string, len(rows))
	for i, r := range rows {
		escaped[i] = esc(r)
	}
	return renderTable(w, esc(headers), align, escaped, true, nil)
}

func renderTable(w io.Writer, headers []string, align string, rows [][]string, md bool, maxWidths []int) error {
	headers, rows = escapeCells(headers), escapeRows(rows) // before widths are measured
	cols := make([]tw.Align, len(headers))
	for i := range cols {
		cols[i] = tw.AlignLeft
		if i < len(align) && align[i] == 'r' {
			cols[i] = tw.AlignRight
		}
	}
	ca := tw.CellAlignment{PerColumn: cols}
	var r tw.Renderer
	if md {
		r = renderer.NewMarkdown()
	} else {
		r = renderer.NewBlueprint(tw.Rendition{
			Borders: tw.BorderNone,
			Symbols: tw.NewSymbols(tw.StyleASCII),
			Settings: tw.Settings{
				Lines:      tw.Lines{ShowHeaderLine: tw.On},
				Separators: tw.Separators{BetweenColumns: tw.Off, BetweenRows: tw.Off},
			},
		})
	}
	var buf bytes.Buffer
	opts := []tablewriter.Option{
		tablewriter.WithRenderer(r),
		tablewriter.WithHeaderAutoFormat(tw.Off),
		tablewriter.WithRowAlignmentConfig(ca),
		tablewriter.WithHeaderAlignmentConfig(ca),
		tablewriter.WithRowAutoWrap(tw.WrapNone),
	}
	if len(maxWidths) > 0 {
		widths := tw.NewMapper[int, int]()
		for i, v := range maxWidths {
			if v > 0 {
				widths[i] = v
			}
		}
		opts = append(opts, tablewriter.WithRowAutoWrap(tw.WrapNormal), tablewriter.WithRowConfig(tw.CellConfig{
			Formatting:   tw.CellFormatting{AutoWrap: tw.WrapNormal},
			Padding:      tw.CellPadding{Global: tw.PaddingDefault},
			Alignment:    ca,
			ColMaxWidths: tw.CellWidth{PerColumn: widths},
		}))
	}
	t := tablewriter.NewTable(&buf, opts...)
	t.Header(toAny(headers)...)
	for _, row := range rows {
		if err := t.Append(row); err != nil {
			return err
		}
	}
	if err := t.Render(); err != nil {
		return err
	}
	lines := strings.Split(buf.String(), "\n")
	for i, l := range lines {
		lines[i] = strings.TrimRight(l, " ")
	}
	_, err := io.WriteString(w, strings.Join(lines, "\n"))
	return err
}

func toAny(s []string) []any {
	out := make([]any, len(s))
	for i, v := range s {
		out[i] = v
	}
	return out
}

// errWriter records the first write error so a sequence of Fprintf calls can
// be checked once.
type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) Write(p []byte) (int, error) {
	if e.err != nil {
		return 0, e.err
	}
	n, err := e.w.Write(p)
	e.err = err
	return n, err
}

func (e *errWriter) printf(format string, args ...any) {
	fmt.Fprintf(e, format, args...)
}
