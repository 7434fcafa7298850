package knowledge

import (
	"fmt"
	"io/fs"
	"nlens/knowledge/input"
	"regexp"
	"strings"
)

// Reference is one published source, with what a bibliography needs.
type Reference struct {
	Key     string   `yaml:"key" json:"key,omitempty"`
	Type    string   `yaml:"type" json:"type,omitempty"` // article | book | chapter | thesis | report | web
	Authors []string `yaml:"authors" json:"authors,omitempty"`
	// Year of publication.
	Year        int      `yaml:"year" json:"year"`
	Title       string   `yaml:"title" json:"title,omitempty"`
	Journal     string   `yaml:"journal" json:"journal,omitempty"`
	Booktitle   string   `yaml:"booktitle" json:"booktitle,omitempty"`
	Editors     []string `yaml:"editors" json:"editors,omitempty"`
	Publisher   string   `yaml:"publisher" json:"publisher,omitempty"`
	Institution string   `yaml:"institution" json:"institution,omitempty"`
	Volume      string   `yaml:"volume" json:"volume,omitempty"`
	Issue       string   `yaml:"issue" json:"issue,omitempty"`
	Pages       string   `yaml:"pages" json:"pages,omitempty"`
	DOI         string   `yaml:"doi" json:"doi,omitempty"`
	URL         string   `yaml:"url" json:"url,omitempty"`
	// Status says which fields were confirmed and which are from memory.
	Status string `yaml:"status" json:"status,omitempty"`
	// Supports lists what the work may be cited for, in the vocabulary of
	// references.yaml ("fractionation:nitrification", "net-rates", …).
	Supports []string `yaml:"supports" json:"supports,omitempty"`
	Note     string   `yaml:"note" json:"note,omitempty"`
	Line     int      `yaml:"-" json:"-"`
}

// Cite returns the author–year form used in text: "Högberg 1997",
// "Houlton & Bai 2009", "Craine et al. 2009".
func (r Reference) Cite() string {
	names := make([]string, len(r.Authors))
	for i, a := range r.Authors {
		names[i] = surname(a)
	}
	var who string
	switch len(names) {
	case 0:
		who = "Anonymous"
	case 1:
		who = names[0]
	case 2:
		who = names[0] + " & " + names[1]
	default:
		who = names[0] + " et al."
	}
	if r.Year == 0 {
		return who + " n.d."
	}
	return fmt.Sprintf("%s %d", who, r.Year)
}

// surname takes "Högberg, P." → "Högberg"; a name without a comma (an
// organisation) is kept whole.
func surname(author string) string {
	if i := strings.Index(author, ","); i > 0 {
		return strings.TrimSpace(author[:i])
	}
	return strings.TrimSpace(author)
}

type referencesFile struct {
	References []Reference `yaml:"references" json:"references,omitempty"`
}

var (
	refTypes = map[string]bool{"article": true, "book": true, "chapter": true, "thesis": true, "report": true, "web": true}
	reKey    = regexp.MustCompile(`^[a-z][a-z0-9-]*[a-z0-9]$`)
	reDOI    = regexp.MustCompile(`^10\.\d{4,9}/\S+$`)
	// reSupports is the vocabulary of a reference's supports (references.yaml).
	reSupports = regexp.MustCompile(`^(net-rates|gross-rates|(fractionation|process|response|bounds|observable):[a-z0-9][a-z0-9:-]*)$`)
)

func (b *Base) loadReferences(fsys fs.FS) error {
	var f referencesFile
	doc, err := readDoc(fsys, "references.yaml", &f)
	if err != nil {
		return err
	}
	var errs input.Errors
	b.refByKey = map[string]int{}
	for i := range f.References {
		r := &f.References[i]
		r.Line = doc.Line("references", i)
		at := func(key, format string, args ...any) {
			errs = append(errs, doc.ErrorAt([]any{"references", i, key}, format, args...))
		}
		if !reKey.MatchString(r.Key) {
			at("key", "expected a lower-case key like houlton2009 or usgs-nitrogen, got %q", r.Key)
		}
		if _, dup := b.refByKey[r.Key]; dup {
			at("key", "key %q listed twice", r.Key)
		}
		b.refByKey[r.Key] = i
		if !refTypes[r.Type] {
			at("type", "expected article, book, chapter, thesis, report or web, got %q", r.Type)
		}
		if len(r.Authors) == 0 {
			at("authors", "missing")
		}
		if (r.Year < 1900 || r.Year > 2100) && !(r.Type == "web" && r.Year == 0) {
			at("year", "implausible year %d (only a web page may omit its year)", r.Year)
		}
		if r.Title == "" {
			at("title", "missing")
		}
		switch r.Type {
		case "article":
			if r.Journal == "" {
				at("journal", "an article needs its journal")
			}
		case "chapter":
			if r.Booktitle == "" {
				at("booktitle", "a chapter needs its book title")
			}
		case "book":
			if r.Publisher == "" {
				at("publisher", "a book needs its publisher")
			}
		case "thesis", "report":
			if r.Institution == "" {
				at("institution", "needs its institution")
			}
		case "web":
			if r.URL == "" {
				at("url", "a web page needs its address")
			}
		}
		if r.DOI != "" && !reDOI.MatchString(r.DOI) {
			at("doi", "expected a DOI like 10.1000/xyz, got %q", r.DOI)
		}
		if r.Status == "" {
			at("status", "missing: say what was confirmed and what is from memory")
		}
		for j, s := range r.Supports {
			if !reSupports.MatchString(s) {
				at(fmt.Sprintf("supports[%d]", j), "expected net-rates, gross-rates or fractionation:, process:, response:, bounds: or observable: and a name, got %q", s)
			}
		}
	}
	b.References = f.References
	return errs.Err()
}
