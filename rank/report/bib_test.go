package report

import (
	"bytes"
	"fmt"
	"strings"
	"testing"
	"unicode"

	"nlens/knowledge"
)

// bibEntryParsed is one entry as the structural parser reads it.
type bibEntryParsed struct {
	kind, key string
	fields    map[string]string
}

// parseBib is a small structural BibTeX reader written for these tests:
// text outside entries is ignored (as BibTeX does), every entry must be
// @type{key, name = {value}, …}, braces must balance inside each value
// (a backslash-escaped brace does not count), and a field may appear once.
func parseBib(s string) ([]bibEntryParsed, error) {
	var out []bibEntryParsed
	line := 1
	for i := 0; i < len(s); {
		if s[i] == '\n' {
			line++
		}
		if s[i] != '@' {
			i++
			continue
		}
		start := line
		j := strings.IndexByte(s[i:], '{')
		if j < 0 {
			return nil, fmt.Errorf("line %d: entry without {", start)
		}
		kind := strings.ToLower(s[i+1 : i+j])
		if kind == "" || strings.IndexFunc(kind, func(r rune) bool { return !unicode.IsLetter(r) }) >= 0 {
			return nil, fmt.Errorf("line %d: bad entry type %q", start, kind)
		}
		i += j + 1
		k := strings.IndexByte(s[i:], ',')
		if k < 0 {
			return nil, fmt.Errorf("line %d: entry without a key", start)
		}
		key := strings.TrimSpace(s[i : i+k])
		if key == "" || strings.ContainsAny(key, " {}\"=,") {
			return nil, fmt.Errorf("line %d: bad key %q", start, key)
		}
		i += k + 1
		e := bibEntryParsed{kind: kind, key: key, fields: map[string]string{}}
		for {
			for i < len(s) && (s[i] == ' ' || s[i] == '\n' || s[i] == '\t' || s[i] == ',') {
				if s[i] == '\n' {
					line++
				}
				i++
			}
			if i >= len(s) {
				return nil, fmt.Errorf("line %d: entry %s not closed", start, key)
			}
			if s[i] == '}' {
				i++
				break
			}
			eq := strings.IndexByte(s[i:], '=')
			if eq < 0 {
				return nil, fmt.Errorf("line %d: field without =", line)
			}
			name := strings.ToLower(strings.TrimSpace(s[i : i+eq]))
			if name == "" || strings.ContainsAny(name, " {}\n") {
				return nil, fmt.Errorf("line %d: bad field name %q", line, name)
			}
			i += eq + 1
			for i < len(s) && s[i] == ' ' {
				i++
			}
			if i >= len(s) || s[i] != '{' {
				return nil, fmt.Errorf("line %d: field %s: value is not braced", line, name)
			}
			depth, v := 0, i
			for ; i < len(s); i++ {
				switch {
				case s[i] == '\\' && i+1 < len(s):
					i++
				case s[i] == '{':
					depth++
				case s[i] == '}':
					depth--
				case s[i] == '\n':
					line++
				}
				if depth == 0 {
					break
				}
			}
			if depth != 0 {
				return nil, fmt.Errorf("line %d: field %s: unbalanced braces", line, name)
			}
			if _, dup := e.fields[name]; dup {
				return nil, fmt.Errorf("entry %s: field %s twice", key, name)
			}
			e.fields[name] = s[v+1 : i]
			i++
		}
		out = append(out, e)
	}
	return out, nil
}

// bibRequired are the fields standard BibTeX styles require per entry type
// (the entry types of Patashnik's BibTeXing, 1988, from memory), plus
// author and title, which nlens always writes.
var bibRequired = map[string][]string{
	"article":       {"author", "title", "journal", "year"},
	"book":          {"author", "title", "publisher", "year"},
	"incollection":  {"author", "title", "booktitle", "publisher", "year"},
	"inproceedings": {"author", "title", "booktitle", "year"},
	"techreport":    {"author", "title", "institution", "year"},
	"mastersthesis": {"author", "title", "school", "year"},
	"phdthesis":     {"author", "title", "school", "year"},
	"misc":          {"author", "title"},
}

// checkEntry holds an entry to its type's required fields and to the
// reference it came from: year and DOI whenever the reference has them.
func checkEntry(e bibEntryParsed, r knowledge.Reference) error {
	req, ok := bibRequired[e.kind]
	if !ok {
		return fmt.Errorf("%s: unexpected entry type @%s", e.key, e.kind)
	}
	for _, f := range req {
		if strings.TrimSpace(e.fields[f]) == "" {
			return fmt.Errorf("%s (@%s): missing %s", e.key, e.kind, f)
		}
	}
	if r.Year > 0 && e.fields["year"] != fmt.Sprint(r.Year) {
		return fmt.Errorf("%s: year %q, want %d", e.key, e.fields["year"], r.Year)
	}
	if r.DOI != "" && e.fields["doi"] != r.DOI {
		return fmt.Errorf("%s: doi %q, want %q", e.key, e.fields["doi"], r.DOI)
	}
	return nil
}

// TestBibTeXWholeKnowledgeBase writes every reference of the knowledge
// base and checks each entry structurally.
func TestBibTeXWholeKnowledgeBase(t *testing.T) {
	t.Parallel()
	kb := testKB(t)
	var b bytes.Buffer
	if err := BibTeX(&b, kb.References); err != nil {
		t.Fatal(err)
	}
	entries, err := parseBib(b.String())
	if err != nil {
		t.Fatal(err)
	}
	if len(entries) != len(kb.References) {
		t.Fatalf("parsed %d entries, want %d", len(entries), len(kb.References))
	}
	for i, e := range entries {
		if e.key != kb.References[i].Key {
			t.Errorf("entry %d: key %s, want %s", i+1, e.key, kb.References[i].Key)
		}
		if err := checkEntry(e, kb.References[i]); err != nil {
			t.Error(err)
		}
	}
}

func TestBibEntryEdgeCases(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name     string
		ref      knowledge.Reference
		kind     string
		contains []string
	}{
		{"organisation braced", knowledge.Reference{Key: "org-page", Type: "web", Authors: []string{"CIAAW"}, Title: "A page", URL: "https://example.org/a_b"},
			"misc", []string{"author = {{CIAAW}}", `howpublished = {\url{https://example.org/a_b}}`}},
		{"special characters escaped", knowledge.Reference{Key: "esc2000", Type: "article", Authors: []string{"Smith, A."}, Year: 2000, Title: "50% of N & {braces}", Journal: "J. A_B", Pages: "1–9"},
			"article", []string{`title = {{50\% of N \& \{braces\}}}`, `journal = {J. A\_B}`, "pages = {1--9}"}},
		{"article without journal becomes misc", knowledge.Reference{Key: "nojournal2001", Type: "article", Authors: []string{"Doe, J."}, Year: 2001, Title: "T"},
			"misc", nil},
		{"chapter without publisher is inproceedings", knowledge.Reference{Key: "conf1989", Type: "chapter", Authors: []string{"Doe, J."}, Year: 1989, Title: "T", Booktitle: "Proceedings of a congress"},
			"inproceedings", []string{"booktitle = {Proceedings of a congress}"}},
		{"unknown type becomes misc", knowledge.Reference{Key: "odd2002", Type: "poster", Authors: []string{"Doe, J."}, Year: 2002, Title: "T"},
			"misc", nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got := bibEntry(tc.ref)
			entries, err := parseBib(got)
			if err != nil {
				t.Fatalf("%v\n%s", err, got)
			}
			if len(entries) != 1 || entries[0].kind != tc.kind {
				t.Fatalf("got %+v, want one @%s:\n%s", entries, tc.kind, got)
			}
			if err := checkEntry(entries[0], tc.ref); err != nil {
				t.Error(err)
			}
			for _, c := range tc.contains {
				if !strings.Contains(got, c) {
					t.Errorf("entry lacks %q:\n%s", c, got)
				}
			}
		})
	}
}

// TestParseBibRejects makes sure the structural check can fail.
func TestParseBibRejects(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct{ name, in string }{
		{"unbalanced", "@article{k,\n  title = {{x}\n}\n"},
		{"no key", "@article{\n  title = {x}\n}\n"},
		{"unclosed", "@article{k,\n  title = {x},\n"},
		{"duplicate field", "@article{k,\n  title = {x},\n  title = {y}\n}\n"},
		{"bare value", "@article{k,\n  title = x\n}\n"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := parseBib(tc.in); err == nil {
				t.Errorf("parseBib accepted %q", tc.in)
			}
		})
	}
}

func TestFullReferenceSuffix(t *testing.T) {
	t.Parallel()
	r := knowledge.Reference{Authors: []string{"Doe, J.", "Roe, R."}, Year: 2015, Title: "A title.", Journal: "J", Volume: "3", Issue: "2", Pages: "1–2", DOI: "10.1/x"}
	// Expected strings written by hand from the format documented on FullReference.
	if got, want := fullReference(r, "b"), "Doe, J. & Roe, R. (2015b). A title. J 3(2): 1–2. doi:10.1/x"; got != want {
		t.Errorf("got %q, want %q", got, want)
	}
	if got, want := FullReference(r), "Doe, J. & Roe, R. (2015). A title. J 3(2): 1–2. doi:10.1/x"; got != want {
		t.Errorf("got %q, want %q", got, want)
	}
}

// Author names as they stand in knowledge/references.yaml must reach BibTeX
// as LaTeX escapes: classic BibTeX reads bytes, so raw UTF-8 breaks sorting,
// initials and output. The expected forms are the standard LaTeX accent
// commands (Lamport, LaTeX: A Document Preparation System, 2nd edn, Table
// 3.1), not the code's own output.
func TestBibTeXEscapesRealNames(t *testing.T) {
	kb := knowledge.MustDefault()
	tests := []struct{ name, key, want string }{
		{"ö", "hogberg2011", `H{\"o}gberg, P.`},
		{"ä", "hogberg2011", `N{\"a}sholm, T.`},
		{"ñ", "craine2009", `Pe{\~n}uelas, J.`},
		{"ñ and é", "craine2018", `Mara{\~n}{\'o}n-Jim{\'e}nez, S.`},
		{"ń", "craine2018", `Zmudczy{\'n}ska-Skarbek, K.`},
		{"ø", "pardo2006", `Kj{\o}naas, J.`},
		{"å", "bengtsson2003", `M{\aa}nsson, K. F.`},
		{"Ü and õ", "becker2018", `Mander, {\"U}.`},
		{"õ", "becker2018", `L{\~o}hmus, K.`},
		{"en dash in pages", "hogberg2011", `pages = {515--525}`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r, ok := kb.Reference(tt.key)
			if !ok {
				t.Fatalf("reference %s not in the knowledge base", tt.key)
			}
			if got := bibEntry(r); !strings.Contains(got, tt.want) {
				t.Errorf("BibTeX of %s lacks %q:\n%s", tt.key, tt.want, got)
			}
		})
	}
	for _, tt := range []struct{ in, want string }{
		{"15N‰", `15N{\textperthousand}`},
		{"δ15N of NO3−", `$\delta$15N of NO3$-$`},
		{"A & B_c", `A \& B\_c`},
	} {
		if got := bibEscape(tt.in); got != tt.want {
			t.Errorf("bibEscape(%q) = %q, want %q", tt.in, got, tt.want)
		}
	}
	// Every entry of the knowledge base: ASCII only, and no character left
	// without a LaTeX form ("?" where the source had none).
	for _, r := range kb.References {
		got := bibEntry(r)
		for i, c := range got {
			if c >= 0x80 {
				t.Errorf("%s: non-ASCII %q at %d", r.Key, c, i)
				break
			}
		}
		src := strings.Join(append(append([]string{r.Title, r.Journal, r.Booktitle, r.Publisher, r.Institution, r.Pages}, r.Authors...), r.Editors...), " ")
		if strings.Count(got, "?") > strings.Count(src, "?") {
			t.Errorf("%s: a character had no LaTeX form:\n%s", r.Key, got)
		}
	}
}
