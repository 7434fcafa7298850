package report

import (
	"bytes"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"

	"golang.org/x/net/html"

	"nlens/rank"
)

func renderHTML(t *testing.T, r *rank.Result, opt HTMLOptions) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := HTML(&b, r, testKB(t), opt); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// demoResult runs the ranking on the demo study (testdata/demo, the copy
// of the one `nlens demo` embeds) with the defaults of `nlens demo`.
func demoResult(t *testing.T) *rank.Result {
	t.Helper()
	path := filepath.Join("..", "..", "testdata", "demo", "study.yaml")
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	r := explainStudyData(t, path, data, rank.Options{Seed: rank.DefaultSeed, Draws: rank.DefaultDraws,
		MaxDraws: rank.DefaultMaxDraws, ModelError: rank.DefaultModelError, Version: "test"})
	r.StudyFile, r.Demo = "demo/study.yaml", true
	return r
}

// TestHTMLDemoGolden pins the demo's HTML report. Regression pin: the file
// records what the renderer wrote for the engine's demo result when it was
// last reviewed (go test ./rank/report -update), not an independent truth.
func TestHTMLDemoGolden(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the ranking engine")
	}
	r := demoResult(t)
	page := renderHTML(t, r, HTMLOptions{})
	golden(t, "html-demo.golden", page)
	checkHTML(t, page, r, nil)
}

// TestHTMLFixtures checks the page of hand-built results: one comparison
// (no figure links) and several with a long-standing contrast.
func TestHTMLFixtures(t *testing.T) {
	for _, tc := range []struct {
		name string
		r    *rank.Result
	}{
		{"transient", transientResult()},
		{"multi", multiResult()},
	} {
		t.Run(tc.name, func(t *testing.T) {
			checkHTML(t, renderHTML(t, tc.r, HTMLOptions{}), tc.r, nil)
		})
	}
}

// TestHTMLSameSectionsAsMarkdown: the headings of the HTML page are the
// Markdown report's, in the same order and words.
func TestHTMLSameSectionsAsMarkdown(t *testing.T) {
	r := multiResult()
	md := renderMarkdown(t, r, MarkdownOptions{Figures: true})
	var want []string
	for _, line := range strings.Split(md, "\n") {
		if m := mdHeading.FindStringSubmatch(line); m != nil {
			want = append(want, unescapeMD(m[2]))
		}
	}
	doc := parseHTML(t, renderHTML(t, r, HTMLOptions{}))
	var got []string
	walk(doc, func(n *html.Node) {
		if n.Type == html.ElementNode && len(n.Data) == 2 && n.Data[0] == 'h' && n.Data[1] >= '1' && n.Data[1] <= '6' {
			got = append(got, textOf(n))
		}
	})
	if !slices.Equal(got, want) {
		t.Errorf("HTML headings differ from the Markdown's:\ngot  %q\nwant %q", got, want)
	}
}

// TestHTMLEscapesUserText: text from a study file reaches the page as
// text, never as markup, and control characters arrive escaped.
func TestHTMLEscapesUserText(t *testing.T) {
	r := transientResult()
	r.StudyTitle = `<script>alert("x")</script> & <img src="http://example.org/x.png"> *stars* [link](http://example.org) ` + "\x1b[31m"
	r.Comparisons[0].Name = `cut <b>vs</b> | intact`
	page := renderHTML(t, r, HTMLOptions{})
	checkHTML(t, page, r, nil)
	doc := parseHTML(t, page)
	var h1 string
	walk(doc, func(n *html.Node) {
		if n.Type == html.ElementNode && n.Data == "h1" {
			h1 = textOf(n)
		}
	})
	for _, want := range []string{`<script>alert("x")</script>`, `<img src="http://example.org/x.png">`, `\x1b`} {
		if !strings.Contains(h1, want) {
			t.Errorf("title %q lacks the literal text %q", h1, want)
		}
	}
	if !strings.Contains(string(page), "cut &lt;b&gt;vs&lt;/b&gt; | intact") {
		t.Error("a comparison name with markup and a pipe is not written as text")
	}
}

func TestMarkdownConverter(t *testing.T) {
	for _, tc := range []struct{ name, md, want string }{
		{"paragraph", "one\ntwo\n", "<p>one two</p>\n"},
		{"emphasis", "*a* **b** `c*d` \\*e\\*", "<p><em>a</em> <strong>b</strong> <code>c*d</code> *e*</p>\n"},
		{"unmatched star", "2 * 3", "<p>2 * 3</p>\n"},
		{"escaping", "a < b & \"c\"", "<p>a &lt; b &amp; &#34;c&#34;</p>\n"},
		{"heading ids", "## A b\n\n## A b\n", "<h2 id=\"a-b\">A b</h2>\n<h2 id=\"a-b-2\">A b</h2>\n"},
		{"list", "- x\n- y\n\nz\n", "<ul>\n<li>x</li>\n<li>y</li>\n</ul>\n<p>z</p>\n"},
		{"ordered", "1. x\n2. y\n", "<ol>\n<li>x</li>\n<li>y</li>\n</ol>\n"},
		{"table", "| a | b |\n|:--|--:|\n| x \\| y | `1` |\n", "<div class=\"table\"><table>\n<thead><tr><th>a</th><th class=\"num\">b</th></tr></thead>\n<tbody>\n<tr><td>x | y</td><td class=\"num\"><code>1</code></td></tr>\n</tbody>\n</table></div>\n"},
		{"anchor link", "see [there](#x)", "<p>see <a href=\"#x\">there</a></p>\n"},
		{"file link without files", "PNG: [a.png](a.png).", "<p>PNG: a.png.</p>\n"},
		{"script link", "[x](javascript:alert(1))", "<p>x)</p>\n"},
		{"citation", "as shown (Craine et al. 2015a; Craine et al. 2015).", "<p>as shown (<a class=\"cite\" href=\"#ref-b\">Craine et al. 2015a</a>; <a class=\"cite\" href=\"#ref-a\">Craine et al. 2015</a>).</p>\n"},
		{"citation inside a word", "XCraine et al. 2015", "<p>XCraine et al. 2015</p>\n"},
		{"missing figure", "![alt](x.svg)\n\n*Cap.* more\n", "<figure id=\"fig-x\">\n<p class=\"missing\">Figure not available: alt</p>\n<figcaption><em>Cap.</em></figcaption>\n</figure>\n"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := &mdConverter{labels: []citeLabel{{"Craine et al. 2015", "ref-a"}, {"Craine et al. 2015a", "ref-b"}}}
			sortLabels(c.labels)
			if got := c.convert(tc.md); got != tc.want {
				t.Errorf("got  %q\nwant %q", got, tc.want)
			}
		})
	}
}

func parseHTML(t *testing.T, page []byte) *html.Node {
	t.Helper()
	doc, err := html.Parse(bytes.NewReader(page))
	if err != nil {
		t.Fatal(err)
	}
	return doc
}

func walk(n *html.Node, f func(*html.Node)) {
	f(n)
	for c := n.FirstChild; c != nil; c = c.NextSibling {
		walk(c, f)
	}
}

func textOf(n *html.Node) string {
	var b strings.Builder
	walk(n, func(m *html.Node) {
		if m.Type == html.TextNode {
			b.WriteString(m.Data)
		}
	})
	return b.String()
}

func attr(n *html.Node, key string) (string, bool) {
	for _, a := range n.Attr {
		if a.Key == key {
			return a.Val, true
		}
	}
	return "", false
}

// nonFinite matches a number printed as NaN or infinity.
var nonFinite = regexp.MustCompile(`\b(NaN|[+-]?Inf)\b`)

// checkHTML parses a report page with golang.org/x/net/html and checks
// that it stands alone: every figure of the result is present as inline
// SVG, every citation links to an entry of the reference list (and every
// entry is cited), nothing is loaded from elsewhere (no script, link,
// img, iframe, object or embed element, no src attribute, no url() in the
// style), links go to ids of the page, to web addresses only as plain
// links, or to files named in files (the bundle's), and no number is
// printed as NaN or infinity.
func checkHTML(t *testing.T, page []byte, r *rank.Result, files []string) {
	t.Helper()
	if k := bytes.IndexFunc(page, func(r rune) bool { return r < 0x20 && r != '\n' || r == 0x7f }); k >= 0 {
		t.Errorf("page holds control character %q at byte %d (the terminal writer would escape it)", page[k], k)
	}
	if EscapeText(string(page)) != string(page) {
		t.Error("page changes when written through the terminal's escaping (EscapeWriter, as --format html is)")
	}
	doc := parseHTML(t, page)
	ids := map[string]int{}
	var hrefs []string
	svgs, viewport, style := 0, false, 0
	var figIDs []string
	walk(doc, func(n *html.Node) {
		if n.Type != html.ElementNode {
			return
		}
		if id, ok := attr(n, "id"); ok {
			ids[id]++
		}
		switch n.Data {
		case "script", "link", "img", "iframe", "object", "embed", "base", "audio", "video", "source":
			t.Errorf("page has a <%s> element", n.Data)
		case "svg":
			svgs++
			if n.Parent == nil || n.Parent.Data != "figure" {
				t.Error("an <svg> is not inside a <figure>")
			}
			if _, ok := attr(n, "viewBox"); !ok {
				t.Error("an inline <svg> has no viewBox, so it cannot scale to a phone's width")
			}
		case "figure":
			id, _ := attr(n, "id")
			figIDs = append(figIDs, id)
		case "meta":
			if v, _ := attr(n, "name"); v == "viewport" {
				viewport = true
			}
		case "style":
			style++
			css := textOf(n)
			for _, bad := range []string{"url(", "@import", "@font-face"} {
				if strings.Contains(css, bad) {
					t.Errorf("style sheet holds %q", bad)
				}
			}
			if !strings.Contains(css, "@media print") {
				t.Error("style sheet has no print rules")
			}
		}
		for _, a := range n.Attr {
			switch {
			case a.Key == "src" || a.Key == "srcset" || a.Key == "xlink:href" || a.Key == "poster" || a.Key == "data":
				t.Errorf("<%s> has %s=%q", n.Data, a.Key, a.Val)
			case a.Key == "style" && strings.Contains(a.Val, "url("):
				t.Errorf("<%s> has a style with url(): %q", n.Data, a.Val)
			case a.Key == "href" && n.Data != "a":
				t.Errorf("<%s> has href=%q", n.Data, a.Val)
			case a.Key == "href":
				hrefs = append(hrefs, a.Val)
			case strings.HasPrefix(a.Key, "on"):
				t.Errorf("<%s> has an event handler %s", n.Data, a.Key)
			}
		}
	})
	if !viewport {
		t.Error("page has no viewport meta element")
	}
	if style != 1 {
		t.Errorf("page has %d style elements, want 1", style)
	}
	for id, n := range ids {
		if n > 1 {
			t.Errorf("id %q is used %d times", id, n)
		}
	}
	plan := figurePlan(r)
	if svgs != len(plan) {
		t.Errorf("page has %d inline figures, the result %d", svgs, len(plan))
	}
	for _, f := range plan {
		if !contains(figIDs, figureID(f.Base)) {
			t.Errorf("figure %s is missing (figures: %v)", f.Base, figIDs)
		}
	}
	for _, h := range hrefs {
		switch {
		case strings.HasPrefix(h, "#"):
			if ids[h[1:]] == 0 {
				t.Errorf("link %q points to no element", h)
			}
		case strings.HasPrefix(h, "https://doi.org/"):
		case contains(files, h):
		default:
			t.Errorf("link %q is neither an anchor of the page, a DOI nor a file of the bundle", h)
		}
	}

	// Citations: every entry of the reference list is linked from the text,
	// and no citation label is left unlinked in running text.
	_, refs := markdownReport(r, testKB(t), MarkdownOptions{Figures: true})
	for _, cr := range refs {
		id := refID(cr.Ref.Key)
		if ids[id] == 0 {
			t.Errorf("reference %s has no entry with id %s", cr.Ref.Key, id)
		}
		if !contains(hrefs, "#"+id) {
			t.Errorf("reference %s (%s) is never linked from the text", cr.Ref.Key, cr.Label)
		}
	}
	walk(doc, func(n *html.Node) {
		if n.Type != html.TextNode || n.Parent == nil || n.Parent.Data == "a" || n.Parent.Data == "style" || n.Parent.Data == "code" {
			return
		}
		for _, cr := range refs {
			if indexWord(n.Data, cr.Label) >= 0 {
				t.Errorf("citation %q left unlinked in %q", cr.Label, n.Data)
			}
		}
		if m := nonFinite.FindString(n.Data); m != "" {
			t.Errorf("page prints %q in %q", m, n.Data)
		}
	})
}

// TestHTMLBundle: the --out folder holds report.html, whose figure
// captions link the PNG files beside it, and which loads none of them.
func TestHTMLBundle(t *testing.T) {
	r := multiResult()
	dir := filepath.Join(t.TempDir(), "out")
	names, err := WriteBundle(dir, r, testKB(t), BundleOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !contains(names, BundleHTML) {
		t.Fatalf("bundle lacks %s: %v", BundleHTML, names)
	}
	page, err := os.ReadFile(filepath.Join(dir, BundleHTML))
	if err != nil {
		t.Fatal(err)
	}
	checkHTML(t, page, r, names)
	if !bytes.Contains(page, []byte(`<a href="shifts-1.png">`)) {
		t.Error("report.html in the bundle does not link the PNG beside it")
	}
	if standalone := renderHTML(t, r, HTMLOptions{}); bytes.Contains(standalone, []byte(".png")) {
		t.Error("the standalone page mentions a PNG file it does not come with")
	}
}

func TestSVGInline(t *testing.T) {
	for _, tc := range []struct{ name, svg, want string }{
		{"gonum's header", "<?xml version=\"1.0\"?>\n<!-- Generated -->\n<svg width=\"10pt\" height=\"5pt\" viewBox=\"0 0 10 5\"\n\txmlns=\"http://www.w3.org/2000/svg\">\n<text\n\tstyle=\"font-family:Liberation Serif;font-size:3px\">a&lt;b</text>\n</svg>\n",
			"<svg viewBox=\"0 0 10 5\" xmlns=\"http://www.w3.org/2000/svg\" role=\"img\" aria-label=\"x &amp; y\">\n<text\n style=\"font-family:'Liberation Serif','Times New Roman',Times,serif;font-size:3px\">a&lt;b</text>\n</svg>\n"},
		{"no svg", "<p>", ""},
		{"cut short", "<svg width=", ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := svgInline(tc.svg, "x & y"); got != tc.want {
				t.Errorf("got  %q\nwant %q", got, tc.want)
			}
		})
	}
}
