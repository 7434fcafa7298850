package report

import (
	"fmt"
	"io"
	"strconv"
	"strings"

	"nlens/knowledge"
)

// FullReference formats a reference in full for a reference list:
// Authors (Year). Title. Journal Volume(Issue): Pages. doi:…
func FullReference(r knowledge.Reference) string {
	var b strings.Builder
	b.WriteString(authorList(r.Authors))
	if r.Year > 0 {
		fmt.Fprintf(&b, " (%d)", r.Year)
	} else {
		b.WriteString(" (n.d.)")
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

func bibEntry(r knowledge.Reference) string {
	kind := map[string]string{"article": "article", "book": "book", "chapter": "incollection", "report": "techreport", "web": "misc"}[r.Type]
	if r.Type == "thesis" {
		kind = "mastersthesis"
		if strings.Contains(strings.ToLower(r.Note+r.Status), "phd") {
			kind = "phdthesis"
		}
	}
	var fields [][2]string
	add := func(k, v string) {
		if v != "" {
			fields = append(fields, [2]string{k, v})
		}
	}
	add("author", bibEscape(strings.Join(r.Authors, " and ")))
	add("title", "{"+bibEscape(r.Title)+"}")
	add("journal", bibEscape(r.Journal))
	add("booktitle", bibEscape(r.Booktitle))
	add("editor", bibEscape(strings.Join(r.Editors, " and ")))
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
	add("pages", strings.ReplaceAll(bibEscape(r.Pages), "–", "--"))
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

// bibEscape escapes the characters BibTeX and LaTeX treat specially.
func bibEscape(s string) string {
	r := strings.NewReplacer(`\`, `\textbackslash{}`, "&", `\&`, "%", `\%`, "$", `\$`, "#", `\#`, "_", `\_`, "{", `\{`, "}", `\}`)
	return r.Replace(s)
}
