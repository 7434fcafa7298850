package report

import (
	"html"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// The HTML report is converted from the Markdown report, so that every
// wording of the Markdown reaches the HTML unchanged. The converter knows
// exactly the subset of Markdown the report writes:
//
//   - ATX headings ("## Summary"), given ids from their text;
//   - paragraphs (consecutive lines joined by a space);
//   - lists of "- " or "1. " items, one line each;
//   - GitHub pipe tables with an alignment row (":--", "--:"), cells
//     split at unescaped "|";
//   - a paragraph that is only an image, "![alt](base.svg)": the figure,
//     drawn inline as SVG, the paragraph after it its caption;
//   - inline: backslash escapes, `code spans`, **strong**, *emphasis* and
//     [links](target).
//
// All text is HTML-escaped; nothing in the Markdown can inject markup.
// Citations ("Högberg et al. 2011", as the reference labels give them)
// found in running text become links to their entry in the reference
// list, which gets the ids.

// mdConverter holds what the conversion needs besides the text.
type mdConverter struct {
	// figures maps an image target ("shifts.svg") to its inline SVG.
	figures map[string]string
	// figureLinks keeps links to figure files (the bundle has them beside
	// report.html); otherwise a figure's caption keeps only its emphasised
	// text.
	figureLinks bool
	// labels are the citation labels, longest first, with the id of the
	// reference each links to.
	labels []citeLabel
	// refIDs are the ids of the reference list's items, in list order.
	refIDs []string
	// refsHeading is the heading text of the reference list.
	refsHeading string

	b        strings.Builder
	headings map[string]int
	inRefs   bool
	refItem  int
}

type citeLabel struct{ text, id string }

// refID is the HTML id of a reference entry.
func refID(key string) string { return "ref-" + slug(key) }

// figureID is the HTML id of a figure.
func figureID(base string) string { return "fig-" + slug(base) }

// slug makes an id from text: lower-case letters and digits, runs of
// anything else as one "-".
func slug(s string) string {
	var b strings.Builder
	dash := false
	for _, r := range strings.ToLower(s) {
		if r < utf8.RuneSelf && (unicode.IsLetter(r) || unicode.IsDigit(r)) {
			if dash && b.Len() > 0 {
				b.WriteByte('-')
			}
			b.WriteRune(r)
			dash = false
			continue
		}
		dash = true
	}
	if b.Len() == 0 {
		return "x"
	}
	return b.String()
}

var (
	mdHeading  = regexp.MustCompile(`^(#{1,6}) (.*)$`)
	mdImage    = regexp.MustCompile(`^!\[((?:[^\]\\]|\\.)*)\]\(([^()\s]+)\)$`)
	mdOrdered  = regexp.MustCompile(`^[0-9]+\. `)
	mdTableSep = regexp.MustCompile(`^\|(\s*:?-+:?\s*\|)+\s*$`)
	// svgSize matches the fixed size of an SVG root, which CSS replaces.
	svgSize = regexp.MustCompile(`\s(width|height)="[^"]*"`)
)

// convert turns the report's Markdown into HTML body content.
func (c *mdConverter) convert(md string) string {
	c.headings = map[string]int{}
	lines := strings.Split(strings.ReplaceAll(md, "\r\n", "\n"), "\n")
	for i := 0; i < len(lines); {
		line := lines[i]
		switch {
		case strings.TrimSpace(line) == "":
			i++
		case strings.HasPrefix(line, "```"):
			i = c.fence(lines, i)
		case mdHeading.MatchString(line):
			c.heading(line)
			i++
		case strings.HasPrefix(line, "|") && i+1 < len(lines) && mdTableSep.MatchString(strings.TrimSpace(lines[i+1])):
			i = c.table(lines, i)
		case strings.HasPrefix(line, "- "), mdOrdered.MatchString(line):
			i = c.list(lines, i)
		case mdImage.MatchString(strings.TrimSpace(line)):
			i = c.figure(lines, i)
		default:
			i = c.paragraph(lines, i)
		}
	}
	return c.b.String()
}

func (c *mdConverter) heading(line string) {
	m := mdHeading.FindStringSubmatch(line)
	level := len(m[1])
	text := strings.TrimSpace(m[2])
	id := slug(unescapeMD(text))
	if n := c.headings[id]; n > 0 {
		c.headings[id] = n + 1
		id += "-" + strconv.Itoa(n+1)
	} else {
		c.headings[id] = 1
	}
	if level == 2 {
		c.inRefs = unescapeMD(text) == c.refsHeading
	}
	tag := "h" + strconv.Itoa(level)
	c.b.WriteString("<" + tag + ` id="` + id + `">` + c.inline(text) + "</" + tag + ">\n")
}

// blockEnd reports whether line starts a new block (ending a paragraph).
func blockEnd(line string) bool {
	return strings.TrimSpace(line) == "" || mdHeading.MatchString(line) || strings.HasPrefix(line, "|") ||
		strings.HasPrefix(line, "- ") || mdOrdered.MatchString(line) || strings.HasPrefix(line, "```") ||
		mdImage.MatchString(strings.TrimSpace(line))
}

func (c *mdConverter) paragraph(lines []string, i int) int {
	var parts []string
	for ; i < len(lines) && (len(parts) == 0 || !blockEnd(lines[i])); i++ {
		parts = append(parts, strings.TrimSpace(lines[i]))
	}
	c.b.WriteString("<p>" + c.inline(strings.Join(parts, " ")) + "</p>\n")
	return i
}

func (c *mdConverter) fence(lines []string, i int) int {
	c.b.WriteString("<pre><code>")
	for i++; i < len(lines) && !strings.HasPrefix(lines[i], "```"); i++ {
		c.b.WriteString(html.EscapeString(lines[i]) + "\n")
	}
	c.b.WriteString("</code></pre>\n")
	return i + 1
}

func (c *mdConverter) list(lines []string, i int) int {
	ordered := mdOrdered.MatchString(lines[i])
	tag := "ul"
	if ordered {
		tag = "ol"
	}
	c.b.WriteString("<" + tag + ">\n")
	for ; i < len(lines); i++ {
		line := lines[i]
		var item string
		switch {
		case !ordered && strings.HasPrefix(line, "- "):
			item = line[2:]
		case ordered && mdOrdered.MatchString(line):
			item = line[len(mdOrdered.FindString(line)):]
		default:
			c.b.WriteString("</" + tag + ">\n")
			return i
		}
		id := ""
		if c.inRefs && c.refItem < len(c.refIDs) {
			id = ` id="` + c.refIDs[c.refItem] + `"`
			c.refItem++
		}
		c.b.WriteString("<li" + id + ">" + c.inline(strings.TrimSpace(item)) + "</li>\n")
	}
	c.b.WriteString("</" + tag + ">\n")
	return i
}

// splitRow splits a table row at unescaped pipes, dropping the outer ones.
func splitRow(line string) []string {
	line = strings.TrimSpace(line)
	line = strings.TrimPrefix(line, "|")
	if strings.HasSuffix(line, "|") && !strings.HasSuffix(line, `\|`) {
		line = line[:len(line)-1]
	}
	var cells []string
	var cur strings.Builder
	for i := 0; i < len(line); i++ {
		switch {
		case line[i] == '\\' && i+1 < len(line) && line[i+1] == '|':
			cur.WriteByte('|')
			i++
		case line[i] == '|':
			cells = append(cells, strings.TrimSpace(cur.String()))
			cur.Reset()
		default:
			cur.WriteByte(line[i])
		}
	}
	return append(cells, strings.TrimSpace(cur.String()))
}

func (c *mdConverter) table(lines []string, i int) int {
	head := splitRow(lines[i])
	var align []string
	for _, s := range splitRow(lines[i+1]) {
		switch {
		case strings.HasSuffix(s, ":"):
			align = append(align, "r")
		default:
			align = append(align, "l")
		}
	}
	cell := func(tag string, k int, s string) {
		class := ""
		if k < len(align) && align[k] == "r" {
			class = ` class="num"`
		}
		c.b.WriteString("<" + tag + class + ">" + c.inline(s) + "</" + tag + ">")
	}
	c.b.WriteString("<div class=\"table\"><table>\n<thead><tr>")
	for k, h := range head {
		cell("th", k, h)
	}
	c.b.WriteString("</tr></thead>\n<tbody>\n")
	for i += 2; i < len(lines) && strings.HasPrefix(lines[i], "|"); i++ {
		c.b.WriteString("<tr>")
		for k, s := range splitRow(lines[i]) {
			cell("td", k, s)
		}
		c.b.WriteString("</tr>\n")
	}
	c.b.WriteString("</tbody>\n</table></div>\n")
	return i
}

// figure writes an image paragraph as an inline figure; the paragraph
// after it is the caption.
func (c *mdConverter) figure(lines []string, i int) int {
	m := mdImage.FindStringSubmatch(strings.TrimSpace(lines[i]))
	alt, target := unescapeMD(m[1]), m[2]
	i++
	for i < len(lines) && strings.TrimSpace(lines[i]) == "" {
		i++
	}
	var caption []string
	if i < len(lines) && !blockEnd(lines[i]) {
		for ; i < len(lines) && !blockEnd(lines[i]); i++ {
			caption = append(caption, strings.TrimSpace(lines[i]))
		}
	}
	svg, ok := c.figures[target]
	base := strings.TrimSuffix(target, ".svg")
	c.b.WriteString(`<figure id="` + figureID(base) + `">` + "\n")
	if ok {
		c.b.WriteString(svgInline(svg, alt))
	} else {
		// A figure the report refers to but could not draw: say so in the
		// page rather than load it from elsewhere.
		c.b.WriteString(`<p class="missing">Figure not available: ` + html.EscapeString(alt) + "</p>\n")
	}
	if len(caption) > 0 {
		text := strings.Join(caption, " ")
		if !c.figureLinks {
			text = leadingEmphasis(text)
		}
		c.b.WriteString("<figcaption>" + c.inline(text) + "</figcaption>\n")
	}
	c.b.WriteString("</figure>\n")
	return i
}

// leadingEmphasis keeps a caption's emphasised first part ("*The
// caption.* PNG: [shifts.png](shifts.png).") and drops the rest, which
// points to files beside the Markdown report.
func leadingEmphasis(s string) string {
	if !strings.HasPrefix(s, "*") || strings.HasPrefix(s, "**") {
		return s
	}
	for j := 1; j < len(s); j++ {
		switch s[j] {
		case '\\':
			j++
		case '*':
			return s[:j+1]
		}
	}
	return s
}

// svgInline prepares a figure's SVG document for inline use: without its
// XML declaration and comments, scaled to the page width by CSS (the
// viewBox keeps its proportions), labelled for screen readers, its text
// in Liberation Serif or a metrically equal font.
func svgInline(svg, alt string) string {
	k := strings.Index(svg, "<svg")
	if k < 0 {
		return ""
	}
	svg = svg[k:]
	end := strings.IndexByte(svg, '>')
	if end < 0 {
		return ""
	}
	open := svgSize.ReplaceAllString(svg[:end], "")
	open = strings.Join(strings.Fields(open), " ")
	body := strings.TrimRight(svg[end+1:], "\n")
	// No tabs (gonum/plot indents attributes with them): the terminal
	// writer would print them as escapes, breaking the markup. Fonts fall
	// back to Times New Roman, which Liberation Serif matches metrically,
	// so labels keep the widths the figure was laid out with.
	body = strings.NewReplacer("\t", " ", "font-family:Liberation Serif;", "font-family:'Liberation Serif','Times New Roman',Times,serif;").Replace(body)
	return open + ` role="img" aria-label="` + html.EscapeString(alt) + `">` + body + "\n"
}

// unescapeMD removes Markdown backslash escapes.
func unescapeMD(s string) string {
	if !strings.Contains(s, `\`) {
		return s
	}
	var b strings.Builder
	for i := 0; i < len(s); i++ {
		if s[i] == '\\' && i+1 < len(s) && isMDPunct(s[i+1]) {
			i++
		}
		b.WriteByte(s[i])
	}
	return b.String()
}

func isMDPunct(c byte) bool {
	return c < utf8.RuneSelf && unicode.IsPunct(rune(c)) || strings.IndexByte("`*_[]<>|\\#+-.!()", c) >= 0
}

// inline converts a line of inline Markdown to HTML.
func (c *mdConverter) inline(s string) string {
	var b strings.Builder
	var text strings.Builder
	flush := func() {
		b.WriteString(c.citations(text.String()))
		text.Reset()
	}
	var open []string // open emphasis delimiters
	for i := 0; i < len(s); {
		ch := s[i]
		switch {
		case ch == '\\' && i+1 < len(s) && isMDPunct(s[i+1]):
			text.WriteByte(s[i+1])
			i += 2
		case ch == '`':
			j := strings.IndexByte(s[i+1:], '`')
			if j < 0 {
				text.WriteByte(ch)
				i++
				continue
			}
			flush()
			b.WriteString("<code>" + html.EscapeString(s[i+1:i+1+j]) + "</code>")
			i += j + 2
		case ch == '*':
			flush()
			d := "*"
			tag := "em"
			if strings.HasPrefix(s[i:], "**") {
				d, tag = "**", "strong"
			}
			if n := len(open); n > 0 && open[n-1] == d {
				b.WriteString("</" + tag + ">")
				open = open[:n-1]
			} else if strings.Contains(s[i+len(d):], d) {
				b.WriteString("<" + tag + ">")
				open = append(open, d)
			} else {
				text.WriteString(d)
			}
			i += len(d)
		case ch == '[':
			label, target, n := mdLink(s[i:])
			if n == 0 {
				text.WriteByte(ch)
				i++
				continue
			}
			flush()
			b.WriteString(c.link(label, target))
			i += n
		default:
			_, size := utf8.DecodeRuneInString(s[i:])
			text.WriteString(s[i : i+size])
			i += size
		}
	}
	flush()
	for k := len(open) - 1; k >= 0; k-- {
		if open[k] == "**" {
			b.WriteString("</strong>")
		} else {
			b.WriteString("</em>")
		}
	}
	return b.String()
}

// mdLink parses "[label](target)" at the start of s and returns its parts
// and length, or n == 0.
func mdLink(s string) (label, target string, n int) {
	depth := 0
	for i := 0; i < len(s); i++ {
		switch s[i] {
		case '\\':
			i++
		case '[':
			depth++
		case ']':
			depth--
			if depth == 0 {
				if i+1 >= len(s) || s[i+1] != '(' {
					return "", "", 0
				}
				j := strings.IndexByte(s[i+2:], ')')
				if j < 0 {
					return "", "", 0
				}
				return s[1:i], s[i+2 : i+2+j], i + 3 + j
			}
		}
	}
	return "", "", 0
}

// link writes a link. Targets are page anchors, web addresses (plain
// links, never loaded) or files beside the report; a file link is kept
// only where the files are (the bundle), else only its text is written.
func (c *mdConverter) link(label, target string) string {
	text := html.EscapeString(unescapeMD(label))
	switch {
	case strings.HasPrefix(target, "#"), strings.HasPrefix(target, "https://"), strings.HasPrefix(target, "http://"):
	case c.figureLinks && !strings.ContainsAny(target, ":/\\"):
	default:
		return text
	}
	return `<a href="` + html.EscapeString(target) + `">` + text + "</a>"
}

var doiPattern = regexp.MustCompile(`doi:(10\.[0-9]{4,9}/[^\s<>"]+[^\s<>".,;])`)

// citations escapes running text and links each citation label in it to
// its reference; in the reference list a DOI becomes a plain link.
func (c *mdConverter) citations(s string) string {
	var b strings.Builder
	for len(s) > 0 {
		at, lab := -1, citeLabel{}
		for _, l := range c.labels {
			k := indexWord(s, l.text)
			if k >= 0 && (at < 0 || k < at) {
				at, lab = k, l
			}
		}
		if at < 0 {
			break
		}
		b.WriteString(c.plainText(s[:at]))
		b.WriteString(`<a class="cite" href="#` + lab.id + `">` + html.EscapeString(lab.text) + "</a>")
		s = s[at+len(lab.text):]
	}
	b.WriteString(c.plainText(s))
	return b.String()
}

func (c *mdConverter) plainText(s string) string {
	if !c.inRefs {
		return html.EscapeString(s)
	}
	var b strings.Builder
	last := 0
	for _, m := range doiPattern.FindAllStringSubmatchIndex(s, -1) {
		b.WriteString(html.EscapeString(s[last:m[0]]))
		doi := s[m[2]:m[3]]
		b.WriteString(`<a href="https://doi.org/` + html.EscapeString(doi) + `">doi:` + html.EscapeString(doi) + "</a>")
		last = m[1]
	}
	b.WriteString(html.EscapeString(s[last:]))
	return b.String()
}

// indexWord finds sub in s where it is not part of a longer word: the
// characters on either side are not letters or digits.
func indexWord(s, sub string) int {
	off := 0
	for {
		k := strings.Index(s[off:], sub)
		if k < 0 {
			return -1
		}
		k += off
		before, _ := utf8.DecodeLastRuneInString(s[:k])
		after, _ := utf8.DecodeRuneInString(s[k+len(sub):])
		if !isWordRune(before) && !isWordRune(after) {
			return k
		}
		off = k + 1
	}
}

func isWordRune(r rune) bool {
	return r != utf8.RuneError && (unicode.IsLetter(r) || unicode.IsDigit(r))
}

// sortLabels orders citation labels longest first, so that "Craine et al.
// 2015a" is found before "Craine et al. 2015".
func sortLabels(ls []citeLabel) {
	slices.SortStableFunc(ls, func(a, b citeLabel) int { return len(b.text) - len(a.text) })
}
