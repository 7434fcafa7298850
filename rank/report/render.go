package report

import (
	"fmt"
	"io"

	"nlens/knowledge"
	"nlens/rank"
)

// ExplainFormats are the formats WriteExplain accepts, in the order the
// help text lists them.
var ExplainFormats = []string{FormatTable, FormatText, FormatMarkdown, FormatHTML, FormatJSON}

// WriteExplain renders an explain result in one format: a terminal table,
// the plain-text e-mail, the Markdown report, the HTML report or JSON. It is the one place
// the --format of explain and demo is dispatched.
func WriteExplain(w io.Writer, r *rank.Result, kb *knowledge.Base, format string) error {
	switch format {
	case FormatTable, "":
		return Table(w, r, ExplainOptions{})
	case FormatText:
		return Text(w, r, kb)
	case FormatMarkdown:
		return Markdown(w, r, kb, MarkdownOptions{})
	case FormatHTML:
		return HTML(w, r, kb, HTMLOptions{})
	case FormatJSON:
		return JSON(w, r)
	}
	return fmt.Errorf("explain cannot write format %q (table, text, markdown, html or json)", format)
}
