package report

import (
	"fmt"
	"io"
	"strconv"
	"strings"
	"unicode/utf8"

	"golang.org/x/text/unicode/norm"

	"nlens/knowledge"
)

// FullReference formats a reference in full for a reference list:
// Authors (Year). Title. Journal Volume(Issue): Pages. doi:…
func FullReference(r knowledge.Reference) string { return fullReference(r, "") }

// fullReference is FullReference with a letter after the year ("2015a")
// for a work whose author–year form another cited work shares.
func fullReference(r knowledge.Reference, suffix string) string {
	var b strings.Builder
	b.WriteString(authorList(r.Authors))
	if r.Year > 0 {
		fmt.Fprintf(&b, " (%d%s)", r.Year, suffix)
	} else {
		fmt.Fprintf(&b, " (n.d.%s)", suffix)
	}
	b.WriteString(". ")
	b.WriteString(strings.TrimSuffix(r.Title, "."))
	b.WriteString(".")
	switch {
	case r.Journal != "":
		b.WriteString(" " + r.Journal)
		if r.Volume != "" {
			b.WriteString(" " + r.Volume)
			if r.Issue != "" {
				b.WriteString("(" + r.Issue + ")")
			}
		}
		if r.Pages != "" {
			b.WriteString(": " + r.Pages)
		}
		b.WriteString(".")
	case r.Booktitle != "":
		b.WriteString(" In: ")
		if len(r.Editors) > 0 {
			b.WriteString(authorList(r.Editors) + " (eds) ")
		}
		b.WriteString(r.Booktitle)
		if r.Pages != "" {
			b.WriteString(", pp. " + r.Pages)
		}
		b.WriteString(".")
		if r.Publisher != "" {
			b.WriteString(" " + r.Publisher + ".")
		}
	case r.Publisher != "":
		b.WriteString(" " + r.Publisher + ".")
	case r.Institution != "":
		b.WriteString(" " + r.Institution + ".")
	}
	if r.DOI != "" {
		b.WriteString(" doi:" + r.DOI)
	} else if r.URL != "" {
		b.WriteString(" " + r.URL)
	}
	return b.String()
}

func authorList(names []string) string {
	switch len(names) {
	case 0:
		return "Anonymous"
	case 1:
		return names[0]
	}
	return strings.Join(names[:len(names)-1], ", ") + " & " + names[len(names)-1]
}

// BibTeX writes the references as BibTeX entries, in the order given.
func BibTeX(w io.Writer, refs []knowledge.Reference) error {
	ew := &errWriter{w: w}
	for i, r := range refs {
		if i > 0 {
			ew.printf("\n")
		}
		ew.printf("%s", bibEntry(r))
	}
	return ew.err
}

// bibCited writes the references a report cites, in its reference-list
// order, each after a comment line giving the label the report uses for
// it, so that "Craine et al. 2015a" in report.md can be matched to its
// entry. BibTeX ignores text outside entries.
func bibCited(w io.Writer, refs []citedRef) error {
	ew := &errWriter{w: w}
	ew.printf("%% References cited in report.md, written by nlens. Each entry follows\n%% the label report.md cites it by.\n")
	for _, cr := range refs {
		ew.printf("\n")
		if fromMemory(cr.Ref) {
			ew.printf("%% Some details of this entry are from memory; verify before citing.\n")
		}
		ew.printf("%% report.md: %s\n%s", cr.Label, bibEntry(cr.Ref))
	}
	return ew.err
}

// bibKinds maps knowledge reference types to BibTeX entry types.
var bibKinds = map[string]string{"article": "article", "book": "book", "chapter": "incollection", "report": "techreport", "web": "misc"}

func bibEntry(r knowledge.Reference) string {
	kind, ok := bibKinds[r.Type]
	if r.Type == "thesis" {
		kind, ok = "mastersthesis", true
		if strings.Contains(strings.ToLower(r.Note+r.Status), "phd") {
			kind = "phdthesis"
		}
	}
	if !ok {
		kind = "misc"
	}
	// A chapter without a publisher is a paper in proceedings, which
	// BibTeX's inproceedings type allows. An entry type whose required
	// container is missing is written as misc rather than as an invalid
	// entry.
	if kind == "incollection" && r.Publisher == "" && r.Booktitle != "" {
		kind = "inproceedings"
	}
	switch {
	case kind == "article" && r.Journal == "",
		kind == "incollection" && r.Booktitle == "",
		kind == "techreport" && r.Institution == "",
		kind == "book" && r.Publisher == "":
		kind = "misc"
	}
	var fields [][2]string
	add := func(k, v string) {
		if v != "" {
			fields = append(fields, [2]string{k, v})
		}
	}
	add("author", bibNames(r.Authors))
	add("title", "{"+bibEscape(r.Title)+"}")
	add("journal", bibEscape(r.Journal))
	add("booktitle", bibEscape(r.Booktitle))
	add("editor", bibNames(r.Editors))
	add("publisher", bibEscape(r.Publisher))
	if r.Type == "thesis" {
		add("school", bibEscape(r.Institution))
	} else {
		add("institution", bibEscape(r.Institution))
	}
	if r.Year > 0 {
		add("year", strconv.Itoa(r.Year))
	}
	add("volume", bibEscape(r.Volume))
	add("number", bibEscape(r.Issue))
	add("pages", bibEscape(r.Pages))
	add("doi", r.DOI)
	if r.URL != "" {
		add("url", r.URL)
		if kind == "misc" {
			add("howpublished", `\url{`+r.URL+`}`)
		}
	}
	var b strings.Builder
	fmt.Fprintf(&b, "@%s{%s,\n", kind, r.Key)
	for i, f := range fields {
		sep := ","
		if i == len(fields)-1 {
			sep = ""
		}
		fmt.Fprintf(&b, "  %s = {%s}%s\n", f[0], f[1], sep)
	}
	b.WriteString("}\n")
	return b.String()
}

// bibNames joins names with "and"; a name without a comma is an
// organisation ("CIAAW") and is braced so BibTeX does not split it into
// given and family names.
func bibNames(names []string) string {
	out := make([]string, len(names))
	for i, n := range names {
		out[i] = bibEscape(n)
		if !strings.Contains(n, ",") {
			out[i] = "{" + out[i] + "}"
		}
	}
	return strings.Join(out, " and ")
}

// bibEscape escapes the characters BibTeX and LaTeX treat specially and
// writes every non-ASCII character as a LaTeX command, so that classic
// BibTeX (which reads bytes, not UTF-8) sorts and prints names correctly:
// é → {\'e}, ö → {\"o}, ø → {\o}, å → {\aa}, ‰ → {\textperthousand},
// – → --. A character with no LaTeX form is written as "?" rather than
// passed through raw.
func bibEscape(s string) string {
	var b strings.Builder
	for _, r := range norm.NFC.String(s) {
		switch {
		case r == '\\':
			b.WriteString(`\textbackslash{}`)
		case strings.ContainsRune("&%$#_{}", r):
			b.WriteString(`\` + string(r))
		case r < utf8.RuneSelf:
			b.WriteRune(r)
		default:
			b.WriteString(latexRune(r))
		}
	}
	return b.String()
}

// latexSpecial are non-ASCII characters with a LaTeX form of their own.
var latexSpecial = map[rune]string{
	'ø': `{\o}`, 'Ø': `{\O}`, 'å': `{\aa}`, 'Å': `{\AA}`, 'æ': `{\ae}`, 'Æ': `{\AE}`,
	'œ': `{\oe}`, 'Œ': `{\OE}`, 'ß': `{\ss}`, 'ł': `{\l}`, 'Ł': `{\L}`, 'ı': `{\i}`,
	'‰': `{\textperthousand}`, '–': `--`, '—': `---`, '‘': "`", '’': `'`, '“': "``", '”': `''`,
	'\u00a0': `~`, '−': `$-$`, '±': `$\pm$`, '×': `$\times$`, '→': `$\rightarrow$`, '°': `{\textdegree}`,
	'α': `$\alpha$`, 'β': `$\beta$`, 'γ': `$\gamma$`, 'δ': `$\delta$`, 'Δ': `$\Delta$`, 'ε': `$\varepsilon$`,
	'μ': `$\mu$`, 'µ': `$\mu$`, 'σ': `$\sigma$`,
	'⁺': `$^{+}$`, '⁻': `$^{-}$`, '₂': `$_2$`, '₃': `$_3$`, '₄': `$_4$`, '²': `$^2$`, '³': `$^3$`, '¹': `$^1$`, '⁵': `$^5$`,
}

// latexAccents maps combining marks to the LaTeX accent commands.
var latexAccents = map[rune]string{
	'\u0301': `\'`, '\u0300': "\\`", '\u0308': `\"`, '\u0302': `\^`, '\u0303': `\~`, '\u0304': `\=`,
	'\u0306': `\u`, '\u0307': `\.`, '\u030A': `\r`, '\u030B': `\H`, '\u030C': `\v`, '\u0327': `\c`, '\u0328': `\k`,
}

// latexRune writes one non-ASCII character: a special form, or an ASCII
// letter with one accent ({\'e}, {\v{c}}).
func latexRune(r rune) string {
	if s, ok := latexSpecial[r]; ok {
		return s
	}
	d := []rune(norm.NFD.String(string(r)))
	if len(d) == 2 && d[0] < utf8.RuneSelf {
		if acc, ok := latexAccents[d[1]]; ok {
			base := string(d[0])
			switch base {
			case "i":
				base = `\i`
			case "j":
				base = `\j`
			}
			if len(acc) == 2 && !isLetter(acc[1]) && len(base) == 1 {
				return "{" + acc + base + "}" // {\'e}
			}
			return "{" + acc + "{" + base + "}}" // {\v{c}}, {\'{\i}}
		}
	}
	return "?"
}

func isLetter(c byte) bool { return c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' }
