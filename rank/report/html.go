package report

import (
	"bytes"
	"fmt"
	"html"
	"io"
	"strings"

	"nlens/knowledge"
	"nlens/rank"
)

// FormatHTML is the self-contained HTML report.
const FormatHTML = "html"

// BundleHTML is the HTML report's name in the --out folder.
const BundleHTML = "report.html"

// HTMLOptions say what the HTML report links to.
type HTMLOptions struct {
	// FigureFiles keeps the figure captions' links to the PNG files that
	// WriteBundle writes beside report.html. The figures themselves are
	// always inline.
	FigureFiles bool
}

// HTML writes the report as one self-contained HTML page: the sections
// and wording of the Markdown report (it is converted from it), every
// figure as inline SVG, the style sheet inline, no scripts and nothing
// loaded from elsewhere. The page reads on a phone (the viewport follows
// the screen, tables scroll sideways) and prints (figures and table rows
// are not split across pages).
func HTML(w io.Writer, r *rank.Result, kb *knowledge.Base, opt HTMLOptions) error {
	page, err := htmlReport(r, kb, opt)
	if err != nil {
		return err
	}
	_, err = w.Write(page)
	return err
}

// htmlReport renders the HTML page into memory.
func htmlReport(r *rank.Result, kb *knowledge.Base, opt HTMLOptions) ([]byte, error) {
	md, refs := markdownReport(r, kb, MarkdownOptions{Figures: true})
	svgs, err := svgFigures(r)
	if err != nil {
		return nil, err
	}
	return htmlPage(r, EscapeText(md), refs, svgs, opt), nil
}

// svgFigures renders every planned figure as SVG, keyed by its file name
// (f.Base + ".svg").
func svgFigures(r *rank.Result) (map[string]string, error) {
	out := map[string]string{}
	for _, f := range figurePlan(r) {
		var buf bytes.Buffer
		if err := Figure(&buf, r, f.Comparison, f.Kind, FigureSVG); err != nil {
			return nil, err
		}
		out[f.Base+"."+FigureSVG] = buf.String()
	}
	return out, nil
}

// htmlPage converts the escaped Markdown report md, with the references it
// cites and its figures' SVG (from svgFigures), into the HTML page.
func htmlPage(r *rank.Result, md string, refs []citedRef, svgs map[string]string, opt HTMLOptions) []byte {
	conv := &mdConverter{figures: svgs, figureLinks: opt.FigureFiles, refsHeading: "References"}
	for _, cr := range refs {
		id := refID(cr.Ref.Key)
		conv.refIDs = append(conv.refIDs, id)
		conv.labels = append(conv.labels, citeLabel{text: cr.Label, id: id})
	}
	sortLabels(conv.labels)
	body := conv.convert(md)

	title := r.StudyTitle
	if title == "" {
		title = r.StudyFile
	}
	var b bytes.Buffer
	b.WriteString("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n")
	b.WriteString(`<meta name="viewport" content="width=device-width, initial-scale=1">` + "\n")
	fmt.Fprintf(&b, "<meta name=\"generator\" content=\"nlens %s\">\n", html.EscapeString(Escape(r.Version)))
	fmt.Fprintf(&b, "<title>%s</title>\n", html.EscapeString(Escape(plain(title))))
	b.WriteString("<style>\n" + strings.TrimSpace(htmlStyle) + "\n</style>\n</head>\n<body>\n<main>\n")
	b.WriteString(body)
	b.WriteString("</main>\n</body>\n</html>\n")
	return b.Bytes()
}

// htmlStyle is the report's style sheet: one readable column, system
// fonts, tables in a sideways-scrolling box, figures at the column's width;
// for print, black on white, no figure or table row split across pages.
const htmlStyle = `
:root { color-scheme: light; }
body { margin: 0; background: #fdfdfb; color: #1d1d1b; font: 16px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", "Liberation Sans", sans-serif; }
main { max-width: 52rem; margin: 0 auto; padding: 1rem 1rem 3rem; }
h1 { font-size: 1.5rem; line-height: 1.25; margin: 0.5rem 0 1rem; }
h2 { font-size: 1.25rem; margin: 2rem 0 0.75rem; padding-bottom: 0.2rem; border-bottom: 1px solid #c9c7bd; }
h3 { font-size: 1.05rem; margin: 1.5rem 0 0.5rem; }
p, li { overflow-wrap: anywhere; }
code { font-family: ui-monospace, "SFMono-Regular", "DejaVu Sans Mono", "Liberation Mono", monospace; font-size: 0.88em; background: #efede6; padding: 0 0.2em; border-radius: 3px; }
a { color: #1b4f8c; }
a.cite { text-decoration: none; border-bottom: 1px dotted #1b4f8c; }
.table { overflow-x: auto; margin: 0.75rem 0 1.25rem; -webkit-overflow-scrolling: touch; }
table { border-collapse: collapse; font-size: 0.9rem; }
th, td { padding: 0.3rem 0.6rem; border-bottom: 1px solid #dedcd3; text-align: left; vertical-align: top; }
th { background: #efede6; }
td { min-width: 3em; }
td.num, th.num { text-align: right; white-space: nowrap; font-variant-numeric: tabular-nums; }
figure { margin: 1.5rem 0; }
figure svg { display: block; width: 100%; height: auto; max-width: 40rem; background: #fff; }
figcaption { font-size: 0.9rem; color: #44433f; margin-top: 0.4rem; }
li[id]:target { background: #fff3c4; }
.missing { color: #8c2f2f; }
@media (max-width: 40rem) {
  body { font-size: 15px; }
  main { padding: 0.75rem 0.75rem 2rem; }
  table { font-size: 0.8rem; }
}
@page { margin: 16mm 14mm; }
@media print {
  body { background: #fff; color: #000; font-size: 10.5pt; }
  main { max-width: none; padding: 0; }
  .table { overflow: visible; }
  table { font-size: 8.5pt; }
  figure, tr, li { break-inside: avoid; }
  h2, h3 { break-after: avoid; }
  figure svg { max-width: 16cm; }
  a { color: #000; }
}
`
